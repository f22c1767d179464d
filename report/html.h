// rotorbench report: self-contained HTML pages — one file, inline CSS and SVG, no scripts,
// no fonts or images from anywhere, readable on screen and printed on A4.
//
// HtmlPage wraps a body in the house style (plain, technical; print rules: A4 margins,
// figures and tables not split across pages). Tables and figures are small builders that
// return HTML text. Text passed as "text" is escaped; arguments named *_html are trusted
// markup. Pure functions; thread-safe.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace rb::report {

/// Escapes &, <, >, " and ' for element text and attribute values.
std::string EscapeHtml(std::string_view text);

/// Number of code points in UTF-8 text (for estimating drawn widths).
size_t Utf8Length(std::string_view text);

/// A complete HTML5 document: <head> with charset, viewport, title and the house CSS, and
/// the given body markup.
std::string HtmlPage(std::string_view title, std::string_view body_html);

/// A table; cells are markup. Columns listed in `numeric` are right-aligned with tabular
/// digits.
class HtmlTable {
 public:
  explicit HtmlTable(std::vector<std::string> headers_html, std::vector<size_t> numeric = {},
                     std::string css_class = "");
  void Row(std::vector<std::string> cells_html);
  bool empty() const { return rows_.empty(); }
  std::string Render() const;

 private:
  std::vector<std::string> headers_;
  std::vector<size_t> numeric_;
  std::string class_;
  std::vector<std::vector<std::string>> rows_;
};

/// <figure> with the SVG markup and a caption (caption is markup).
std::string FigureHtml(std::string_view svg, std::string_view caption_html);

}  // namespace rb::report
