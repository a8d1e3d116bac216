// The SVG/XML writer of the plots (core/api/svg_writer.h): escaping, numbers, nesting.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

#include "api/svg_writer.h"

namespace {

namespace svg = planckton::api::svg;

constexpr const char* kDeclaration = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>";

// The five characters XML 1.0 (section 2.4) reserves, in text and in attribute values.
TEST(SvgWriter, EscapesTheFiveMarkupCharacters) {
  EXPECT_EQ(svg::escape("a & b < c > d \" e ' f"), "a &amp; b &lt; c &gt; d &quot; e &apos; f");
  EXPECT_EQ(svg::escape("&amp;"), "&amp;amp;");  // escaping twice is visible, never undone
  EXPECT_EQ(svg::escape(""), "");
}

TEST(SvgWriter, KeepsUtf8AndReplacesWhatXmlDoesNotAllow) {
  EXPECT_EQ(svg::escape("\u00B5m \u03BB \u00B1 \u2212 \U0001F52D"), "\u00B5m \u03BB \u00B1 \u2212 \U0001F52D");
  EXPECT_EQ(svg::escape("tab\tline\nreturn\r"), "tab\tline\nreturn\r");
  // C0 controls other than tab, LF and CR are not XML 1.0 characters (section 2.2): U+FFFD.
  EXPECT_EQ(svg::escape(std::string("a\x01" "b\x1F" "c", 5)), "a\uFFFDb\uFFFDc");
  EXPECT_EQ(svg::escape(std::string("nul\0end", 7)), "nul\uFFFDend");
  // Bytes that are not UTF-8 (RFC 3629): a lone continuation byte, a truncated sequence, an
  // overlong form, an encoded surrogate.
  EXPECT_EQ(svg::escape("x\x80y"), "x\uFFFDy");
  EXPECT_EQ(svg::escape("x\xE2\x82"), "x\uFFFD\uFFFD");
  EXPECT_EQ(svg::escape("\xC0\xAF"), "\uFFFD\uFFFD");
  EXPECT_EQ(svg::escape("\xED\xA0\x80"), "\uFFFD\uFFFD\uFFFD");
  EXPECT_EQ(svg::escape("\xEF\xBF\xBE"), "\uFFFD");  // U+FFFE is not a character
}

TEST(SvgWriter, NumbersAreCompact) {
  EXPECT_EQ(svg::number(12.3456), "12.35");
  EXPECT_EQ(svg::number(12.3456, 1), "12.3");
  EXPECT_EQ(svg::number(12.0), "12");
  EXPECT_EQ(svg::number(12.5), "12.5");
  EXPECT_EQ(svg::number(0.1), "0.1");
  EXPECT_EQ(svg::number(800.0, 0), "800");
  EXPECT_EQ(svg::number(-3.25, 2), "-3.25");
  EXPECT_EQ(svg::number(1e-7), "0");
  EXPECT_EQ(svg::number(-1e-7), "0");  // never "-0"
  EXPECT_EQ(svg::number(-0.0), "0");
  EXPECT_EQ(svg::number(1234567.891, 2), "1234567.89");
}

TEST(SvgWriter, NumbersAreAlwaysFinite) {
  constexpr double kInf = std::numeric_limits<double>::infinity();
  EXPECT_EQ(svg::number(std::numeric_limits<double>::quiet_NaN()), "0");
  EXPECT_EQ(svg::number(kInf), "1000000000");
  EXPECT_EQ(svg::number(-kInf), "-1000000000");
  EXPECT_EQ(svg::number(1e300), "1000000000");
  EXPECT_EQ(svg::number(std::numeric_limits<double>::denorm_min()), "0");
  for (const double v : {std::nan(""), kInf, -kInf, 1e308, -1e308}) {
    const std::string text = svg::number(v, 12);
    EXPECT_EQ(text.find_first_of("naNIi"), std::string::npos) << text;
  }
}

TEST(SvgWriter, WritesElementsAttributesAndText) {
  svg::XmlWriter out;
  out.open("svg").attribute("xmlns", svg::kNamespace).attribute("width", 800.0);
  out.open("title").text("T = 5800 K & \"more\"").close();
  out.open("circle").attribute("cx", 12.3456).attribute("r", 2.0).attribute("class", "point <x>").close();
  out.close();
  EXPECT_EQ(out.finish(), std::string(kDeclaration) +
                              "\n<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"800\">"
                              "\n  <title>T = 5800 K &amp; &quot;more&quot;</title>"
                              "\n  <circle cx=\"12.35\" r=\"2\" class=\"point &lt;x&gt;\"/>"
                              "\n</svg>\n");
}

TEST(SvgWriter, NestsWithIndentationButNotInsideText) {
  svg::XmlWriter out;
  out.open("svg").open("g").open("g").open("rect").close().close().close();
  out.open("text").attribute("x", 1.0).text("10");
  out.open("tspan").attribute("dy", -4.0).text("\u22123").close();
  out.open("tspan").text(" nm").close();
  out.close().close();
  EXPECT_EQ(out.depth(), 0u);
  EXPECT_EQ(out.finish(), std::string(kDeclaration) +
                              "\n<svg>"
                              "\n  <g>"
                              "\n    <g>"
                              "\n      <rect/>"
                              "\n    </g>"
                              "\n  </g>"
                              "\n  <text x=\"1\">10<tspan dy=\"-4\">\u22123</tspan><tspan> nm</tspan></text>"
                              "\n</svg>\n");
}

TEST(SvgWriter, ElementWithEmptyTextHasAnEndTag) {
  svg::XmlWriter out;
  out.open("svg").element("desc", "").close();
  EXPECT_EQ(out.finish(), std::string(kDeclaration) + "\n<svg>\n  <desc></desc>\n</svg>\n");
}

TEST(SvgWriter, RefusesMisuse) {
  {
    svg::XmlWriter out;
    out.open("svg").text("x");
    EXPECT_THROW(out.attribute("late", "1"), std::logic_error);  // attributes belong to the start tag
    EXPECT_THROW(out.finish(), std::logic_error);                 // <svg> is still open
  }
  {
    svg::XmlWriter out;
    EXPECT_THROW(out.close(), std::logic_error);
    EXPECT_THROW(out.text("outside"), std::logic_error);
    EXPECT_THROW(out.attribute("a", "b"), std::logic_error);
  }
}

TEST(SvgWriter, IsReusableAfterFinish) {
  svg::XmlWriter out;
  out.open("a").close();
  const std::string first = out.finish();
  out.open("a").close();
  EXPECT_EQ(out.finish(), first);  // the same calls give the same bytes
}

TEST(SvgWriter, PathDataIsCompact) {
  svg::PathData d;
  EXPECT_TRUE(d.empty());
  d.move_to(1.0, 2.5).line_to(3.333, -4.0).close();
  EXPECT_EQ(d.str(), "M1 2.5L3.33 -4Z");
  svg::PathData coarse(0);
  coarse.move_to(1.6, std::numeric_limits<double>::quiet_NaN());
  EXPECT_EQ(coarse.str(), "M2 0");
}

}  // namespace
