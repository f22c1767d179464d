// SVG plots: well-formed and self-contained, data mapped onto the drawn axes, dense data
// thinned without losing the envelope, NaN gaps, legends, histograms, escaping.
#include "report/svg_plot.h"

#include <doctest/doctest.h>

#include <cmath>
#include <regex>
#include <string>
#include <vector>

#include "report/html.h"

using namespace rb::report;

namespace {

/// Tags balance like XML (every element closed, in order); returns "" or the problem.
std::string WellFormed(const std::string& s) {
  std::vector<std::string> stack;
  size_t i = 0;
  while ((i = s.find('<', i)) != std::string::npos) {
    const size_t j = s.find('>', i);
    if (j == std::string::npos) return "unterminated tag at " + std::to_string(i);
    std::string tag = s.substr(i + 1, j - i - 1);
    i = j + 1;
    if (tag.empty()) return "empty tag";
    if (tag[0] == '!' || tag[0] == '?') continue;
    if (tag.back() == '/') continue;  // self-closing
    const bool closing = tag[0] == '/';
    std::string name = tag.substr(closing ? 1 : 0);
    name = name.substr(0, name.find_first_of(" \t\n"));
    if (closing) {
      if (stack.empty() || stack.back() != name) return "unbalanced </" + name + ">";
      stack.pop_back();
    } else {
      stack.push_back(name);
    }
  }
  return stack.empty() ? "" : "unclosed <" + stack.back() + ">";
}

struct Box {
  double x, y, w, h;
};

/// The frame of panel k (the outlined plot area).
Box Frame(const std::string& svg, int k) {
  static const std::regex re(
      R"re(<rect x="([-\d.]+)" y="([-\d.]+)" width="([-\d.]+)" height="([-\d.]+)" fill="none" stroke="#9a9a9a")re");
  auto it = std::sregex_iterator(svg.begin(), svg.end(), re);
  for (int i = 0; i < k && it != std::sregex_iterator(); ++i) ++it;
  REQUIRE(it != std::sregex_iterator());
  return {std::stod((*it)[1]), std::stod((*it)[2]), std::stod((*it)[3]), std::stod((*it)[4])};
}

/// The d attribute of the first path drawn with `stroke`.
/// The d attribute of the first path drawn in `stroke`. A plain search, not std::regex:
/// libstdc++'s regex recurses once per character, and a thinned million-point path is long
/// enough to exhaust the stack under AddressSanitizer.
std::string PathWithStroke(const std::string& svg, const std::string& stroke) {
  const std::string open = "<path d=\"", key = "stroke=\"" + stroke + "\"";
  for (size_t at = svg.find(open); at != std::string::npos; at = svg.find(open, at + 1)) {
    const size_t d0 = at + open.size(), d1 = svg.find('"', d0);
    const size_t end = d1 == std::string::npos ? d1 : svg.find('>', d1);
    if (end == std::string::npos) break;
    if (svg.substr(d1, end - d1).find(key) != std::string::npos) return svg.substr(d0, d1 - d0);
  }
  FAIL("no path drawn in ", stroke);
  return "";
}

std::vector<std::pair<double, double>> Points(const std::string& d) {
  std::vector<std::pair<double, double>> out;
  static const std::regex re(R"([ML]([-\d.]+) ([-\d.]+))");
  for (auto it = std::sregex_iterator(d.begin(), d.end(), re); it != std::sregex_iterator(); ++it) {
    out.push_back({std::stod((*it)[1]), std::stod((*it)[2])});
  }
  return out;
}

Figure OneLine(std::vector<double> x, std::vector<double> y) {
  Figure f;
  f.id = "t";
  f.x.title = "time [s]";
  Panel p;
  p.y.title = "speed [rpm]";
  Series s;
  s.colour = "#123456";
  s.x = std::move(x);
  s.y = std::move(y);
  p.series.push_back(s);
  f.panels.push_back(p);
  return f;
}

}  // namespace

TEST_CASE("a figure is one well-formed, self-contained <svg class=\"plot\">") {
  Figure f = OneLine({0, 1, 2}, {3, 1, 2});
  f.title = "Speed <at> 6 V & \"more\"";
  f.panels[0].markers.push_back({1, 1, "", 'd', "max efficiency", "max 68 %"});
  f.panels[0].lines.push_back({true, 1.5, "limit", kColourLimit, true, true});
  Panel strip;
  strip.y.symmetric = true;
  strip.series.push_back({"", Style::kDots, kColourResidual, {0, 1, 2}, {-0.1, 0.2, 0}, {}});
  f.panels.push_back(strip);
  const std::string svg = RenderSvg(f);
  CHECK(svg.rfind("<svg class=\"plot\" id=\"t\"", 0) == 0);
  CHECK(WellFormed(svg) == "");
  CHECK(svg.find("http") == std::string::npos);  // no namespace URL, no links
  CHECK(svg.find("<script") == std::string::npos);
  CHECK(svg.find("Speed &lt;at&gt; 6 V &amp; &quot;more&quot;") != std::string::npos);
  CHECK(svg.find("id=\"t-c0\"") != std::string::npos);  // one clip path per panel
  CHECK(svg.find("id=\"t-c1\"") != std::string::npos);
  CHECK(svg.find(">time [s]<") != std::string::npos);
  CHECK(svg.find(">speed [rpm]<") != std::string::npos);
  CHECK(svg.find(">max efficiency<") != std::string::npos);  // legend
  CHECK(svg.find(">max 68 %<") != std::string::npos);        // label at the point
  CHECK(svg.find(">limit<") != std::string::npos);
}

TEST_CASE(
    "data land on the drawn axes: fixed ranges put the ends of a diagonal on the "
    "frame's corners") {
  Figure f = OneLine({0, 10}, {0, 100});
  f.x.min = 0;
  f.x.max = 10;
  f.panels[0].y.min = 0;
  f.panels[0].y.max = 100;
  const std::string svg = RenderSvg(f);
  const Box b = Frame(svg, 0);
  const auto pts = Points(PathWithStroke(svg, "#123456"));
  REQUIRE(pts.size() == 2);
  CHECK(pts[0].first == doctest::Approx(b.x).epsilon(1e-3));
  CHECK(pts[0].second == doctest::Approx(b.y + b.h).epsilon(1e-3));  // y grows downwards
  CHECK(pts[1].first == doctest::Approx(b.x + b.w).epsilon(1e-3));
  CHECK(pts[1].second == doctest::Approx(b.y).epsilon(1e-3));
  // Tick labels of the fixed ranges include both ends.
  CHECK(svg.find(">100<") != std::string::npos);
  CHECK(svg.find(">10<") != std::string::npos);
}

TEST_CASE(
    "a million-point line is thinned to ≤ 4 points per pixel column, keeping the "
    "envelope (its extremes reach the frame)") {
  const int n = 1000000;
  std::vector<double> x(n), y(n);
  for (int k = 0; k < n; ++k) {
    x[k] = k * 1e-5;
    y[k] = std::sin(k * 0.37);  // fast: many cycles per pixel column
  }
  Figure f = OneLine(x, y);
  f.panels[0].y.min = -1;
  f.panels[0].y.max = 1;
  const std::string svg = RenderSvg(f);
  const Box b = Frame(svg, 0);
  const auto pts = Points(PathWithStroke(svg, "#123456"));
  CHECK(pts.size() <= static_cast<size_t>(4 * (b.w + 2)));
  double top = 1e9, bottom = -1e9;
  for (auto [px, py] : pts) {
    top = std::min(top, py);
    bottom = std::max(bottom, py);
  }
  CHECK(top == doctest::Approx(b.y).epsilon(1e-3));
  CHECK(bottom == doctest::Approx(b.y + b.h).epsilon(1e-3));
  CHECK(svg.size() < 200000);
}

TEST_CASE("dots: one per occupied half-pixel, NaN skipped, lines break at NaN") {
  Figure f;
  f.id = "d";
  Panel p;
  Series dots;
  dots.style = Style::kDots;
  dots.colour = "#abcdef";
  for (int k = 0; k < 100000; ++k) {
    dots.x.push_back(k % 2 ? 1.0 : 2.0);  // only two distinct points
    dots.y.push_back(k % 2 ? 1.0 : 2.0);
  }
  dots.x.push_back(NAN);
  dots.y.push_back(3);
  p.series.push_back(dots);
  Series line;
  line.colour = "#fedcba";
  line.x = {0, 1, 2, 3, 4};
  line.y = {0, 1, NAN, 3, 4};
  p.series.push_back(line);
  f.panels.push_back(p);
  const std::string svg = RenderSvg(f);
  const std::string d = PathWithStroke(svg, "#abcdef");
  size_t count = 0;
  for (size_t i = d.find("h0"); i != std::string::npos; i = d.find("h0", i + 1)) ++count;
  CHECK(count == 2);
  const std::string l = PathWithStroke(svg, "#fedcba");
  CHECK(std::count(l.begin(), l.end(), 'M') == 2);
  CHECK(std::count(l.begin(), l.end(), 'L') == 2);
}

TEST_CASE("legend: one entry per label and shape, unlabelled series stay out") {
  Figure f = OneLine({0, 1}, {0, 1});
  f.panels[0].series[0].label = "fit 7";
  Series band{"±2u band", Style::kBand, "", {0, 1}, {0, 0.5}, {1, 1.5}};
  f.panels[0].series.push_back(band);
  f.panels[0].series.push_back(band);  // a second fit's band: same legend entry
  f.panels[0].series.push_back({"", Style::kLine, "", {0, 1}, {1, 0}, {}});
  for (int i = 0; i < 3; ++i) f.panels[0].markers.push_back({0.5, 0.5, "", 'o', "max power", ""});
  const std::string svg = RenderSvg(f);
  auto count = [&](const std::string& s) {
    size_t n = 0;
    for (size_t i = svg.find(s); i != std::string::npos; i = svg.find(s, i + 1)) ++n;
    return n;
  };
  CHECK(count(">fit 7<") == 1);
  CHECK(count(">±2u band<") == 1);
  CHECK(count(">max power<") == 1);
}

TEST_CASE("histogram bars count values per bin, values outside the range are left out") {
  const std::vector<double> v = {0.1, 0.2, 0.25, 0.5, 0.55, 0.9, 1.0, -1, 2, NAN};
  const Series h = HistogramSeries(v, 0, 1, 4, "units");
  REQUIRE(h.x.size() == 5);
  REQUIRE(h.y.size() == 4);
  CHECK(h.x.front() == 0);
  CHECK(h.x.back() == 1);
  CHECK(h.y[0] == 2);  // 0.1, 0.2
  CHECK(h.y[1] == 1);  // 0.25
  CHECK(h.y[2] == 2);  // 0.5, 0.55
  CHECK(h.y[3] == 2);  // 0.9, 1.0 (the top edge belongs to the last bin)
  Figure f;
  f.id = "h";
  Panel p;
  p.series.push_back(h);
  p.lines.push_back({true, 0.3, "LSL", kColourLimit, true, true});
  p.lines.push_back({true, 0.8, "USL", kColourLimit, true, true});
  p.y.include_zero = true;
  f.panels.push_back(p);
  const std::string svg = RenderSvg(f);
  CHECK(WellFormed(svg) == "");
  size_t bars = 0;
  for (size_t i = svg.find("fill-opacity=\"0.85\""); i != std::string::npos;
       i = svg.find("fill-opacity=\"0.85\"", i + 1)) {
    ++bars;
  }
  CHECK(bars == 4 + 1);  // four bars and the legend swatch
  CHECK(svg.find(">LSL<") != std::string::npos);
}

TEST_CASE("colours: the palette cycles, HTML escaping covers quotes") {
  CHECK(std::string(SeriesColour(0)) == SeriesColour(7));
  CHECK(std::string(SeriesColour(0)) != SeriesColour(1));
  CHECK(EscapeHtml("a<b>&\"c'") == "a&lt;b&gt;&amp;&quot;c&#39;");
  CHECK(Utf8Length("±2σ") == 3);
}
