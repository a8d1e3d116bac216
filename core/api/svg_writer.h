// A small XML writer for the SVG pictures of a fit (fit_plot.h): elements, attributes and text,
// written in the order they are given, so that the same calls always give the same bytes.
//
// Method. A stack of open elements; a start tag stays open for attributes until the element gets
// content or is closed (then it is written as an empty-element tag, "<circle .../>"). Elements
// without text content are put on lines of their own, indented by depth; inside an element with
// text no white space is added, so that mixed content (<text>10<tspan>3</tspan></text>) is exact.
//
// Escaping (XML 1.0, W3C Recommendation, fifth edition 2008, sections 2.2 and 2.4): & < > " ' are
// written as &amp; &lt; &gt; &quot; &apos; in text and in attribute values alike; characters XML
// 1.0 does not allow (the C0 controls other than tab, line feed and carriage return, and U+FFFE,
// U+FFFF) and bytes that are not UTF-8 are written as U+FFFD, so that any caller's text (a band id,
// a unit) gives a well-formed document.
//
// Numbers are fixed-point with at most `decimals` decimals (std::to_chars, independent of the
// locale), without trailing zeros or a trailing point, and never "-0". The writer never emits NaN
// or infinities: NaN is written as 0 and a magnitude beyond kLargestNumber as +-kLargestNumber
// (the plots clip their coordinates long before that).
//
// Example:
//   planckton::api::svg::XmlWriter out;
//   out.open("svg").attribute("xmlns", planckton::api::svg::kNamespace).attribute("width", 800);
//   out.open("title").text("T = 5800 K & more").close();
//   out.open("circle").attribute("cx", 12.3456).attribute("r", 2.0).close();
//   std::string text = out.finish();
//   // <?xml version="1.0" encoding="UTF-8"?>
//   // <svg xmlns="http://www.w3.org/2000/svg" width="800">
//   //   <title>T = 5800 K &amp; more</title>
//   //   <circle cx="12.35" r="2"/>
//   // </svg>
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace planckton::api::svg {

inline constexpr std::string_view kNamespace = "http://www.w3.org/2000/svg";
inline constexpr double kLargestNumber = 1e9;

// Text for XML content or an attribute value, escaped as above.
std::string escape(std::string_view text);

// A finite number, fixed-point with at most `decimals` (0 to 12) decimals, as above.
std::string number(double value, int decimals = 2);

class XmlWriter {
 public:
  // Starts the document with the XML declaration.
  XmlWriter();

  // Opens an element inside the current one. Names are the writer's caller's own (not escaped).
  XmlWriter& open(std::string_view name);
  // An attribute of the element just opened; std::logic_error after its content has begun.
  XmlWriter& attribute(std::string_view name, std::string_view value);
  XmlWriter& attribute(std::string_view name, const char* value) { return attribute(name, std::string_view(value)); }
  XmlWriter& attribute(std::string_view name, const std::string& value) { return attribute(name, std::string_view(value)); }
  XmlWriter& attribute(std::string_view name, double value, int decimals = 2);
  // Text content of the current element (escaped).
  XmlWriter& text(std::string_view content);
  // Closes the current element; std::logic_error when none is open.
  XmlWriter& close();
  // An element with text content only: open, text, close.
  XmlWriter& element(std::string_view name, std::string_view content);

  // The document; std::logic_error while elements are open. The writer is empty afterwards.
  std::string finish();

  std::size_t depth() const { return open_.size(); }

 private:
  struct Open {
    std::string name;
    bool start_tag_open = true;  // attributes may still follow
    bool has_children = false;   // elements inside (then the end tag gets a line of its own)
    bool has_text = false;
  };
  bool inside_text() const;
  void end_start_tag();
  void new_line();

  std::string out_;
  std::vector<Open> open_;
};

// The d attribute of an SVG path: absolute move-to, line-to and close commands, compact numbers.
class PathData {
 public:
  explicit PathData(int decimals = 2) : decimals_(decimals) {}
  PathData& move_to(double x, double y);
  PathData& line_to(double x, double y);
  PathData& close();
  bool empty() const { return d_.empty(); }
  const std::string& str() const { return d_; }

 private:
  void point(char command, double x, double y);
  int decimals_;
  std::string d_;
};

}  // namespace planckton::api::svg
