#include "api/svg_writer.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <stdexcept>

namespace planckton::api::svg {

namespace {

constexpr std::string_view kReplacement = "\xEF\xBF\xBD";  // U+FFFD in UTF-8

// The length of the well-formed UTF-8 sequence at text[i] (RFC 3629, section 4), or 0.
std::size_t utf8_sequence(std::string_view text, std::size_t i, std::uint32_t& code) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
  const unsigned char lead = byte(i);
  std::size_t length = 0;
  if (lead < 0x80) {
    code = lead;
    return 1;
  }
  if (lead >= 0xC2 && lead <= 0xDF) {
    length = 2;
    code = lead & 0x1F;
  } else if (lead >= 0xE0 && lead <= 0xEF) {
    length = 3;
    code = lead & 0x0F;
  } else if (lead >= 0xF0 && lead <= 0xF4) {
    length = 4;
    code = lead & 0x07;
  } else {
    return 0;
  }
  if (i + length > text.size()) return 0;
  for (std::size_t k = 1; k < length; ++k) {
    if ((byte(i + k) & 0xC0) != 0x80) return 0;
    code = (code << 6) | (byte(i + k) & 0x3F);
  }
  // Overlong forms, surrogates and values beyond U+10FFFF are not UTF-8.
  if ((length == 3 && code < 0x800) || (length == 4 && (code < 0x10000 || code > 0x10FFFF)) ||
      (code >= 0xD800 && code <= 0xDFFF)) {
    return 0;
  }
  return length;
}

// XML 1.0 section 2.2: Char ::= #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF]
bool allowed_in_xml(std::uint32_t code) {
  if (code < 0x20) return code == 0x9 || code == 0xA || code == 0xD;
  return code != 0xFFFE && code != 0xFFFF;
}

}  // namespace

std::string escape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size();) {
    std::uint32_t code = 0;
    const std::size_t length = utf8_sequence(text, i, code);
    if (length == 0) {
      out += kReplacement;
      ++i;
      continue;
    }
    if (!allowed_in_xml(code)) {
      out += kReplacement;
    } else if (length > 1) {
      out.append(text.substr(i, length));
    } else {
      switch (text[i]) {
        case '&': out += "&amp;"; break;
        case '<': out += "&lt;"; break;
        case '>': out += "&gt;"; break;
        case '"': out += "&quot;"; break;
        case '\'': out += "&apos;"; break;
        default: out += text[i];
      }
    }
    i += length;
  }
  return out;
}

std::string number(double value, int decimals) {
  decimals = std::clamp(decimals, 0, 12);
  if (std::isnan(value)) value = 0.0;
  value = std::clamp(value, -kLargestNumber, kLargestNumber);
  char buffer[64];
  const auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value, std::chars_format::fixed, decimals);
  if (error != std::errc()) return "0";
  std::string text(buffer, end);
  if (text.find('.') != std::string::npos) {
    while (text.back() == '0') text.pop_back();
    if (text.back() == '.') text.pop_back();
  }
  if (text == "-0") text = "0";
  return text;
}

XmlWriter::XmlWriter() { out_ = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>"; }

bool XmlWriter::inside_text() const {
  return std::any_of(open_.begin(), open_.end(), [](const Open& e) { return e.has_text; });
}

void XmlWriter::end_start_tag() {
  if (!open_.empty() && open_.back().start_tag_open) {
    out_ += '>';
    open_.back().start_tag_open = false;
  }
}

void XmlWriter::new_line() {
  out_ += '\n';
  out_.append(2 * open_.size(), ' ');
}

XmlWriter& XmlWriter::open(std::string_view name) {
  end_start_tag();
  if (!open_.empty()) open_.back().has_children = true;
  if (!inside_text()) new_line();
  out_ += '<';
  out_.append(name);
  open_.push_back({std::string(name)});
  return *this;
}

XmlWriter& XmlWriter::attribute(std::string_view name, std::string_view value) {
  if (open_.empty() || !open_.back().start_tag_open) {
    throw std::logic_error("XmlWriter: attribute '" + std::string(name) + "' after the element's content");
  }
  out_ += ' ';
  out_.append(name);
  out_ += "=\"";
  out_ += escape(value);
  out_ += '"';
  return *this;
}

XmlWriter& XmlWriter::attribute(std::string_view name, double value, int decimals) {
  return attribute(name, std::string_view(number(value, decimals)));
}

XmlWriter& XmlWriter::text(std::string_view content) {
  if (open_.empty()) throw std::logic_error("XmlWriter: text outside an element");
  end_start_tag();
  open_.back().has_text = true;
  out_ += escape(content);
  return *this;
}

XmlWriter& XmlWriter::close() {
  if (open_.empty()) throw std::logic_error("XmlWriter: close() without an open element");
  Open element = std::move(open_.back());
  open_.pop_back();
  if (element.start_tag_open) {
    out_ += "/>";
    return *this;
  }
  if (element.has_children && !element.has_text && !inside_text()) new_line();
  out_ += "</";
  out_ += element.name;
  out_ += '>';
  return *this;
}

XmlWriter& XmlWriter::element(std::string_view name, std::string_view content) {
  return open(name).text(content).close();
}

std::string XmlWriter::finish() {
  if (!open_.empty()) throw std::logic_error("XmlWriter: finish() with <" + open_.back().name + "> still open");
  out_ += '\n';
  std::string document = std::move(out_);
  out_ = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>";
  return document;
}

void PathData::point(char command, double x, double y) {
  d_ += command;
  d_ += number(x, decimals_);
  d_ += ' ';
  d_ += number(y, decimals_);
}

PathData& PathData::move_to(double x, double y) {
  point('M', x, y);
  return *this;
}

PathData& PathData::line_to(double x, double y) {
  point('L', x, y);
  return *this;
}

PathData& PathData::close() {
  d_ += 'Z';
  return *this;
}

}  // namespace planckton::api::svg
