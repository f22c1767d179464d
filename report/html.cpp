#include "report/html.h"

#include <algorithm>

namespace rb::report {
namespace {

// The house style. Colours match report/svg_plot.h; print rules keep figures and tables
// whole and start the per-run section on a new page.
constexpr std::string_view kCss = R"css(
:root { --ink: #222; --muted: #666; --rule: #d9d9d9; --accent: #0072B2; --warn: #E69F00; }
* { box-sizing: border-box; }
body { font: 14px/1.45 "DejaVu Sans", Helvetica, Arial, sans-serif; color: var(--ink);
  max-width: 1020px; margin: 0 auto; padding: 18px 22px 40px; background: #fff; }
h1 { font-size: 22px; margin: 0 0 2px; }
h2 { font-size: 17px; margin: 26px 0 8px; padding-bottom: 3px; border-bottom: 2px solid var(--accent); }
h3 { font-size: 14.5px; margin: 18px 0 6px; }
p { margin: 6px 0; }
.meta { color: var(--muted); font-size: 12.5px; }
.cards { display: grid; grid-template-columns: repeat(auto-fill, minmax(190px, 1fr)); gap: 10px;
  margin: 12px 0; }
.card { border: 1px solid var(--rule); border-top: 3px solid var(--accent); padding: 7px 12px; }
.card .k { font-size: 12px; color: var(--muted); }
.card .v { font-size: 18px; font-weight: bold; }
.card .u { font-size: 12px; color: var(--muted); white-space: nowrap; }
table { border-collapse: collapse; margin: 6px 0 10px; font-size: 13px; }
th, td { padding: 3px 10px 3px 0; border-bottom: 1px solid var(--rule); text-align: left;
  vertical-align: top; }
th { font-weight: bold; border-bottom: 1.5px solid #999; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.sub td { color: var(--muted); }
figure { margin: 10px 0 16px; break-inside: avoid; page-break-inside: avoid; }
figcaption { font-size: 12.5px; color: var(--muted); margin-top: 2px; }
svg.plot { display: block; max-width: 100%; height: auto; }
.grid2 { display: grid; grid-template-columns: repeat(auto-fit, minmax(440px, 1fr)); gap: 4px 18px; }
.note { border-left: 4px solid var(--rule); padding: 4px 10px; margin: 8px 0; }
.warning { border-left: 4px solid var(--warn); background: #fff8e8; padding: 5px 10px; margin: 6px 0; }
.error { border-left: 4px solid #b2182b; background: #fdecee; padding: 5px 10px; margin: 6px 0; }
.caution { border: 1px solid var(--warn); background: #fffaf0; padding: 6px 12px; margin: 12px 0;
  font-size: 13px; }
.caution ul { margin: 4px 0 2px 18px; padding: 0; }
ul.diag { list-style: none; padding: 0; }
.small { font-size: 12px; color: var(--muted); }
@page { size: A4; margin: 14mm 12mm 14mm 12mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 10pt; }
  h2 { break-after: avoid; page-break-after: avoid; }
  h3 { break-after: avoid; page-break-after: avoid; }
  table, .cards, .caution, .warning { break-inside: avoid; page-break-inside: avoid; }
  table { font-size: 8.5pt; }
  th, td { padding-right: 6px; }
  section.runs { break-before: page; page-break-before: always; }
  .grid2 { grid-template-columns: 1fr 1fr; }
  svg.plot { max-width: 100%; }
  a { color: inherit; text-decoration: none; }
}
)css";

}  // namespace

std::string EscapeHtml(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

size_t Utf8Length(std::string_view text) {
  return static_cast<size_t>(std::count_if(text.begin(), text.end(), [](char c) {
    return (static_cast<unsigned char>(c) & 0xC0) != 0x80;
  }));
}

std::string HtmlPage(std::string_view title, std::string_view body_html) {
  std::string out;
  out.reserve(body_html.size() + kCss.size() + 512);
  out += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
  out += "<title>" + EscapeHtml(title) + "</title>\n<style>";
  out += kCss;
  out += "</style>\n</head>\n<body>\n";
  out += body_html;
  out += "\n</body>\n</html>\n";
  return out;
}

HtmlTable::HtmlTable(std::vector<std::string> headers_html, std::vector<size_t> numeric,
                     std::string css_class)
    : headers_(std::move(headers_html)),
      numeric_(std::move(numeric)),
      class_(std::move(css_class)) {}

void HtmlTable::Row(std::vector<std::string> cells_html) { rows_.push_back(std::move(cells_html)); }

std::string HtmlTable::Render() const {
  auto is_num = [&](size_t c) {
    return std::find(numeric_.begin(), numeric_.end(), c) != numeric_.end();
  };
  std::string out = class_.empty() ? "<table>" : "<table class=\"" + EscapeHtml(class_) + "\">";
  out += "<thead><tr>";
  for (size_t c = 0; c < headers_.size(); ++c) {
    out += is_num(c) ? "<th class=\"num\">" : "<th>";
    out += headers_[c] + "</th>";
  }
  out += "</tr></thead><tbody>";
  for (const auto& r : rows_) {
    out += "<tr>";
    for (size_t c = 0; c < r.size(); ++c) {
      out += is_num(c) ? "<td class=\"num\">" : "<td>";
      out += r[c] + "</td>";
    }
    out += "</tr>";
  }
  out += "</tbody></table>";
  return out;
}

std::string FigureHtml(std::string_view svg, std::string_view caption_html) {
  std::string out = "<figure>";
  out += svg;
  if (!caption_html.empty()) {
    out += "<figcaption>";
    out += caption_html;
    out += "</figcaption>";
  }
  out += "</figure>";
  return out;
}

}  // namespace rb::report
