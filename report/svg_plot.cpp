#include "report/svg_plot.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <limits>
#include <unordered_set>

#include "report/html.h"
#include "report/ticks.h"

namespace rb::report {
namespace {

constexpr const char* kPalette[] = {"#0072B2", "#D55E00", "#009E73", "#CC79A7",
                                    "#E69F00", "#56B4E9", "#000000"};
constexpr double kCharW = 6.1;     // mean glyph width of the 11 px sans-serif text
constexpr double kLegendRow = 17;  // px per legend row
constexpr double kPanelGap = 10;   // px between stacked panels

/// Appends v with one decimal (pixel coordinates).
void Num(std::string& out, double v) {
  char buf[32];
  const double r = std::round(v * 10) / 10;
  auto res = std::to_chars(buf, buf + sizeof buf, r == 0 ? 0.0 : r, std::chars_format::fixed, 1);
  std::string_view s(buf, static_cast<size_t>(res.ptr - buf));
  if (s.size() > 2 && s.substr(s.size() - 2) == ".0") s.remove_suffix(2);
  out += s;
}

std::string N(double v) {
  std::string s;
  Num(s, v);
  return s;
}

/// An opacity (0..1) with two decimals.
std::string Opacity(double v) {
  char buf[16];
  std::snprintf(buf, sizeof buf, "%.2f", std::clamp(v, 0.0, 1.0));
  return buf;
}

struct Range {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void Add(double v) {
    if (!std::isfinite(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool empty() const { return lo > hi; }
};

AxisTicks TicksFor(const Axis& axis, Range data, int target) {
  if (axis.include_zero) data.Add(0.0);
  if (data.empty()) data.lo = 0, data.hi = 1;
  if (axis.symmetric) {
    const double m = std::max(std::fabs(data.lo), std::fabs(data.hi));
    data.lo = -m;
    data.hi = m;
  }
  if (axis.min) data.lo = *axis.min;
  if (axis.max) data.hi = *axis.max;
  // Fixed ends are kept, with the ticks inside them. Either way, ask for denser ticks until
  // at least three fall inside (a narrow residual strip would otherwise show only its zero).
  const bool fixed = axis.min || axis.max;
  const double lo = data.lo, hi = data.hi > data.lo ? data.hi : data.lo + 1;
  AxisTicks t;
  for (int n = target; n <= target + 8; ++n) {
    if (!fixed) {
      t = PlotTicks(data.lo, data.hi, n);
    } else {
      t = NiceTicks(lo, hi, n);
      t.lo = lo;
      t.hi = hi;
      std::erase_if(t.values,
                    [&](double v) { return v < lo - 1e-9 * t.step || v > hi + 1e-9 * t.step; });
    }
    if (t.values.size() >= 3) break;
  }
  return t;
}

Range XRange(const Figure& f) {
  Range r;
  for (const Panel& p : f.panels) {
    for (const Series& s : p.series) {
      for (double v : s.x) r.Add(v);
    }
    for (const Marker& m : p.markers) r.Add(m.x);
    for (const RefLine& l : p.lines) {
      if (l.vertical) r.Add(l.at);
    }
  }
  return r;
}

Range YRange(const Panel& p) {
  Range r;
  for (const Series& s : p.series) {
    for (double v : s.y) r.Add(v);
    for (double v : s.y2) r.Add(v);
  }
  for (const Marker& m : p.markers) r.Add(m.y);
  for (const RefLine& l : p.lines) {
    if (!l.vertical) r.Add(l.at);
  }
  return r;
}

/// Maps data to pixels inside one panel.
struct Frame {
  double x0, x1, y0, y1;  // pixel box: left, right, top, bottom
  AxisTicks xt, yt;
  double Px(double x) const { return x0 + (x - xt.lo) / (xt.hi - xt.lo) * (x1 - x0); }
  double Py(double y) const { return y1 - (y - yt.lo) / (yt.hi - yt.lo) * (y1 - y0); }
};

std::string ColourOf(const Series& s, int index) {
  return s.colour.empty() ? SeriesColour(index) : s.colour;
}

/// A polyline as path data; NaN breaks it. Dense runs are thinned to the first, lowest,
/// highest and last point of each pixel column, which keeps the drawn envelope.
std::string LinePath(const Series& s, const Frame& fr) {
  std::string d;
  const size_t n = std::min(s.x.size(), s.y.size());
  bool pen_down = false;
  double col = NAN;
  struct P {
    double x, y;
  };
  std::vector<P> bucket;
  auto emit = [&](double px, double py) {
    d += pen_down ? 'L' : 'M';
    Num(d, px);
    d += ' ';
    Num(d, py);
    pen_down = true;
  };
  auto flush = [&] {
    if (bucket.empty()) return;
    if (bucket.size() <= 4) {
      for (const P& p : bucket) emit(p.x, p.y);
    } else {
      auto [mn, mx] = std::minmax_element(bucket.begin(), bucket.end(),
                                          [](const P& a, const P& b) { return a.y < b.y; });
      const P* lo = &*mn;
      const P* hi = &*mx;
      if (lo > hi) std::swap(lo, hi);  // keep the order in which they occur
      emit(bucket.front().x, bucket.front().y);
      emit(lo->x, lo->y);
      emit(hi->x, hi->y);
      emit(bucket.back().x, bucket.back().y);
    }
    bucket.clear();
  };
  for (size_t k = 0; k < n; ++k) {
    if (!std::isfinite(s.x[k]) || !std::isfinite(s.y[k])) {
      flush();
      pen_down = false;
      col = NAN;
      continue;
    }
    const double px = fr.Px(s.x[k]), py = fr.Py(s.y[k]);
    const double c = std::floor(px);
    if (c != col) {
      flush();
      col = c;
    }
    bucket.push_back({px, py});
  }
  flush();
  return d;
}

/// Dots as zero-length round-capped path segments, one per occupied half-pixel cell.
std::string DotPath(const Series& s, const Frame& fr) {
  std::string d;
  std::unordered_set<long long> seen;
  const size_t n = std::min(s.x.size(), s.y.size());
  for (size_t k = 0; k < n; ++k) {
    if (!std::isfinite(s.x[k]) || !std::isfinite(s.y[k])) continue;
    const double px = fr.Px(s.x[k]), py = fr.Py(s.y[k]);
    if (px < fr.x0 - 2 || px > fr.x1 + 2 || py < fr.y0 - 2 || py > fr.y1 + 2) continue;
    const long long key = static_cast<long long>(std::lround(px * 2)) * 100000 +
                          static_cast<long long>(std::lround(py * 2));
    if (!seen.insert(key).second) continue;
    d += 'M';
    Num(d, px);
    d += ' ';
    Num(d, py);
    d += "h0";
  }
  return d;
}

std::string BandPath(const Series& s, const Frame& fr) {
  const size_t n = std::min({s.x.size(), s.y.size(), s.y2.size()});
  std::string d;
  std::vector<size_t> ok;
  for (size_t k = 0; k < n; ++k) {
    if (std::isfinite(s.x[k]) && std::isfinite(s.y[k]) && std::isfinite(s.y2[k])) ok.push_back(k);
  }
  if (ok.size() < 2) return d;
  for (size_t j = 0; j < ok.size(); ++j) {
    d += j ? 'L' : 'M';
    Num(d, fr.Px(s.x[ok[j]]));
    d += ' ';
    Num(d, fr.Py(s.y[ok[j]]));
  }
  for (size_t j = ok.size(); j-- > 0;) {
    d += 'L';
    Num(d, fr.Px(s.x[ok[j]]));
    d += ' ';
    Num(d, fr.Py(s.y2[ok[j]]));
  }
  d += 'Z';
  return d;
}

std::string MarkerShape(char shape, double x, double y, double r, const std::string& colour) {
  const std::string attrs = " fill=\"" + colour + "\" stroke=\"#fff\" stroke-width=\"1\"/>";
  switch (shape) {
    case 's':
      return "<rect x=\"" + N(x - r * 0.85) + "\" y=\"" + N(y - r * 0.85) + "\" width=\"" +
             N(r * 1.7) + "\" height=\"" + N(r * 1.7) + "\"" + attrs;
    case 'd':
      return "<path d=\"M" + N(x) + " " + N(y - r * 1.2) + "L" + N(x + r * 1.2) + " " + N(y) + "L" +
             N(x) + " " + N(y + r * 1.2) + "L" + N(x - r * 1.2) + " " + N(y) + "Z\"" + attrs;
    case '^':
      return "<path d=\"M" + N(x) + " " + N(y - r * 1.2) + "L" + N(x + r * 1.1) + " " +
             N(y + r * 0.8) + "L" + N(x - r * 1.1) + " " + N(y + r * 0.8) + "Z\"" + attrs;
    case 'v':
      return "<path d=\"M" + N(x) + " " + N(y + r * 1.2) + "L" + N(x + r * 1.1) + " " +
             N(y - r * 0.8) + "L" + N(x - r * 1.1) + " " + N(y - r * 0.8) + "Z\"" + attrs;
    default:
      return "<circle cx=\"" + N(x) + "\" cy=\"" + N(y) + "\" r=\"" + N(r) + "\"" + attrs;
  }
}

struct LegendEntry {
  enum Kind { kLine, kDashed, kDots, kBand, kBars, kMarker, kRule } kind;
  std::string colour, text;
  char shape = 'o';
  double opacity = 1;
};

std::vector<LegendEntry> LegendOf(const Figure& f) {
  std::vector<LegendEntry> out;
  auto has = [&](const std::string& text, char shape, LegendEntry::Kind kind) {
    return std::any_of(out.begin(), out.end(), [&](const LegendEntry& e) {
      return e.text == text && e.kind == kind && (kind != LegendEntry::kMarker || e.shape == shape);
    });
  };
  for (const Panel& p : f.panels) {
    int index = 0;
    for (const Series& s : p.series) {
      const int i = index++;
      if (s.label.empty()) continue;
      LegendEntry::Kind k = s.style == Style::kLine     ? LegendEntry::kLine
                            : s.style == Style::kDashed ? LegendEntry::kDashed
                            : s.style == Style::kDots   ? LegendEntry::kDots
                            : s.style == Style::kBand   ? LegendEntry::kBand
                                                        : LegendEntry::kBars;
      if (has(s.label, 0, k)) continue;
      out.push_back({k, ColourOf(s, i), s.label, 'o', s.opacity});
    }
    for (const Marker& m : p.markers) {
      if (m.legend.empty() || has(m.legend, m.shape, LegendEntry::kMarker)) continue;
      out.push_back({LegendEntry::kMarker, m.colour.empty() ? SeriesColour(0) : m.colour, m.legend,
                     m.shape, 1});
    }
    for (const RefLine& l : p.lines) {
      if (!l.legend || l.label.empty() || has(l.label, 0, LegendEntry::kRule)) continue;
      out.push_back({LegendEntry::kRule, l.colour, l.label, 'o', 1});
    }
  }
  return out;
}

/// Lays the legend out in rows from (x, y) within `width`; returns the SVG and the rows used.
std::string RenderLegend(const std::vector<LegendEntry>& entries, double x, double y, double width,
                         int* rows) {
  std::string out;
  double cx = x;
  int row = 0;
  for (const LegendEntry& e : entries) {
    const double w = 24 + kCharW * static_cast<double>(Utf8Length(e.text)) + 14;
    if (cx > x && cx + w > x + width) {
      cx = x;
      ++row;
    }
    const double cy = y + row * kLegendRow;
    const std::string c = e.colour;
    switch (e.kind) {
      case LegendEntry::kLine:
      case LegendEntry::kDashed:
      case LegendEntry::kRule:
        out += "<path d=\"M" + N(cx) + " " + N(cy) + "h18\" stroke=\"" + c +
               "\" stroke-width=\"2\"" +
               (e.kind == LegendEntry::kLine ? "" : " stroke-dasharray=\"5 3\"") + "/>";
        break;
      case LegendEntry::kDots:
        out += "<path d=\"M" + N(cx + 4) + " " + N(cy) + "h0M" + N(cx + 9) + " " + N(cy) + "h0M" +
               N(cx + 14) + " " + N(cy) + "h0\" stroke=\"" + c +
               "\" stroke-width=\"3\" stroke-linecap=\"round\"/>";
        break;
      case LegendEntry::kBand:
      case LegendEntry::kBars:
        out += "<rect x=\"" + N(cx) + "\" y=\"" + N(cy - 5) +
               "\" width=\"18\" height=\"10\" fill=\"" + c + "\" fill-opacity=\"" +
               (e.kind == LegendEntry::kBand ? "0.30" : "0.85") + "\"/>";
        break;
      case LegendEntry::kMarker:
        out += MarkerShape(e.shape, cx + 9, cy, 4.5, c);
        break;
    }
    out +=
        "<text x=\"" + N(cx + 24) + "\" y=\"" + N(cy + 4) + "\">" + EscapeHtml(e.text) + "</text>";
    cx += w;
  }
  *rows = entries.empty() ? 0 : row + 1;
  return out;
}

}  // namespace

const char* SeriesColour(int i) {
  const int n = static_cast<int>(std::size(kPalette));
  return kPalette[((i % n) + n) % n];
}

std::string RenderSvg(const Figure& f) {
  const double W = f.width, H = f.height;
  std::string out;
  out.reserve(16384);
  out += "<svg class=\"plot\" id=\"" + EscapeHtml(f.id) + "\" viewBox=\"0 0 " + N(W) + " " + N(H) +
         "\" width=\"" + N(W) + "\" height=\"" + N(H) +
         "\" role=\"img\" font-family=\"DejaVu Sans, Helvetica, Arial, sans-serif\" "
         "font-size=\"11\" fill=\"#222\">";
  if (!f.title.empty()) out += "<title>" + EscapeHtml(f.title) + "</title>";
  if (f.panels.empty()) return out + "</svg>";

  // Ticks first: the left margin depends on the widest y label.
  const Range xr = XRange(f);
  std::vector<Range> yr;
  for (const Panel& p : f.panels) yr.push_back(YRange(p));
  double weight_sum = 0;
  for (const Panel& p : f.panels) weight_sum += std::max(0.05, p.weight);

  double top = 6;
  if (!f.title.empty()) {
    out += "<text x=\"8\" y=\"16\" font-size=\"13\" font-weight=\"bold\">" + EscapeHtml(f.title) +
           "</text>";
    top = 24;
  }
  const std::vector<LegendEntry> legend = LegendOf(f);
  int legend_rows = 0;
  const double right = 14, bottom = 40;
  // Provisional plot height for the y tick count; the left margin needs the labels.
  const double plot_h_est = H - top - bottom - 18 * 2;
  std::vector<AxisTicks> yts;
  size_t widest = 1;
  for (size_t i = 0; i < f.panels.size(); ++i) {
    const double ph = plot_h_est * std::max(0.05, f.panels[i].weight) / weight_sum;
    yts.push_back(TicksFor(f.panels[i].y, yr[i], std::clamp(static_cast<int>(ph / 42), 2, 8)));
    for (double v : yts.back().values) widest = std::max(widest, TickLabel(v, yts.back()).size());
  }
  const double left = 30 + kCharW * static_cast<double>(widest);
  std::string legend_svg = RenderLegend(legend, left, top + 8, W - left - right, &legend_rows);
  out += legend_svg;
  const double plot_top = top + legend_rows * kLegendRow + (legend_rows ? 6 : 4);
  const double plot_h =
      H - plot_top - bottom - kPanelGap * static_cast<double>(f.panels.size() - 1);
  const double x0 = left, x1 = W - right;
  const AxisTicks xt = TicksFor(f.x, xr, std::clamp(static_cast<int>((x1 - x0) / 85), 3, 10));

  double y = plot_top;
  for (size_t i = 0; i < f.panels.size(); ++i) {
    const Panel& p = f.panels[i];
    const double ph = plot_h * std::max(0.05, p.weight) / weight_sum;
    Frame fr{x0, x1, y, y + ph, xt, yts[i]};
    const std::string clip = f.id + "-c" + std::to_string(i);
    out += "<clipPath id=\"" + EscapeHtml(clip) + "\"><rect x=\"" + N(x0) + "\" y=\"" + N(fr.y0) +
           "\" width=\"" + N(x1 - x0) + "\" height=\"" + N(ph) + "\"/></clipPath>";
    // Grid and tick labels.
    std::string grid;
    for (double v : xt.values) {
      grid += "M" + N(fr.Px(v)) + " " + N(fr.y0) + "V" + N(fr.y1);
    }
    for (double v : fr.yt.values) {
      grid += "M" + N(x0) + " " + N(fr.Py(v)) + "H" + N(x1);
      out += "<text x=\"" + N(x0 - 5) + "\" y=\"" + N(fr.Py(v) + 3.8) + "\" text-anchor=\"end\">" +
             TickLabel(v, fr.yt) + "</text>";
    }
    out += "<path d=\"" + grid + "\" stroke=\"#e3e3e3\" stroke-width=\"1\" fill=\"none\"/>";
    if (fr.yt.lo < 0 && fr.yt.hi > 0) {  // the zero line, a little stronger
      out += "<path d=\"M" + N(x0) + " " + N(fr.Py(0)) + "H" + N(x1) +
             "\" stroke=\"#bdbdbd\" stroke-width=\"1\"/>";
    }
    if (!p.y.title.empty()) {
      const double cy = (fr.y0 + fr.y1) / 2;
      out += "<text transform=\"translate(12 " + N(cy) + ") rotate(-90)\" text-anchor=\"middle\">" +
             EscapeHtml(p.y.title) + "</text>";
    }
    // Data, clipped to the panel.
    out += "<g clip-path=\"url(#" + EscapeHtml(clip) + ")\">";
    int index = 0;
    for (const Series& s : p.series) {
      const std::string c = ColourOf(s, index++);
      const std::string op = s.opacity < 1 ? Opacity(s.opacity) : "";
      switch (s.style) {
        case Style::kLine:
        case Style::kDashed: {
          const std::string d = LinePath(s, fr);
          if (d.empty()) break;
          out += "<path d=\"" + d + "\" fill=\"none\" stroke=\"" + c + "\" stroke-width=\"" +
                 N(s.width) + "\" stroke-linejoin=\"round\"" +
                 (s.style == Style::kDashed ? " stroke-dasharray=\"6 4\"" : "") +
                 (op.empty() ? "" : " stroke-opacity=\"" + op + "\"") + "/>";
          break;
        }
        case Style::kDots: {
          const std::string d = DotPath(s, fr);
          if (d.empty()) break;
          out += "<path d=\"" + d + "\" stroke=\"" + c + "\" stroke-width=\"" + N(s.width) +
                 "\" stroke-linecap=\"round\"" +
                 (op.empty() ? "" : " stroke-opacity=\"" + op + "\"") + "/>";
          break;
        }
        case Style::kBand: {
          const std::string d = BandPath(s, fr);
          if (d.empty()) break;
          out += "<path d=\"" + d + "\" fill=\"" + c + "\" fill-opacity=\"" +
                 (op.empty() ? "0.2" : op) + "\" stroke=\"none\"/>";
          break;
        }
        case Style::kBars: {
          const size_t nb = s.x.size() > 0 ? std::min(s.x.size() - 1, s.y.size()) : 0;
          for (size_t k = 0; k < nb; ++k) {
            if (!std::isfinite(s.y[k]) || s.y[k] == 0) continue;
            const double bx0 = fr.Px(s.x[k]), bx1 = fr.Px(s.x[k + 1]);
            const double by = fr.Py(s.y[k]), base = fr.Py(std::max(0.0, fr.yt.lo));
            out += "<rect x=\"" + N(bx0 + 0.5) + "\" y=\"" + N(std::min(by, base)) + "\" width=\"" +
                   N(std::max(0.5, bx1 - bx0 - 1)) + "\" height=\"" + N(std::fabs(base - by)) +
                   "\" fill=\"" + c + "\" fill-opacity=\"" + (op.empty() ? "0.85" : op) + "\"/>";
          }
          break;
        }
      }
    }
    for (const RefLine& l : p.lines) {
      const std::string dash = l.dashed ? " stroke-dasharray=\"5 3\"" : "";
      if (l.vertical) {
        const double px = fr.Px(l.at);
        out += "<path d=\"M" + N(px) + " " + N(fr.y0) + "V" + N(fr.y1) + "\" stroke=\"" + l.colour +
               "\" stroke-width=\"1.5\"" + dash + "/>";
        if (!l.label.empty()) {
          out += "<text x=\"" + N(px + 3) + "\" y=\"" + N(fr.y0 + 11) + "\" fill=\"" + l.colour +
                 "\" font-size=\"10\">" + EscapeHtml(l.label) + "</text>";
        }
      } else {
        const double py = fr.Py(l.at);
        out += "<path d=\"M" + N(x0) + " " + N(py) + "H" + N(x1) + "\" stroke=\"" + l.colour +
               "\" stroke-width=\"1\"" + dash + "/>";
        if (!l.label.empty()) {
          out += "<text x=\"" + N(x1 - 3) + "\" y=\"" + N(py - 3) +
                 "\" text-anchor=\"end\" fill=\"" + l.colour + "\" font-size=\"10\">" +
                 EscapeHtml(l.label) + "</text>";
        }
      }
    }
    for (const Marker& m : p.markers) {
      if (!std::isfinite(m.x) || !std::isfinite(m.y)) continue;
      const double px = fr.Px(m.x), py = fr.Py(m.y);
      out += MarkerShape(m.shape, px, py, 4.5, m.colour.empty() ? SeriesColour(0) : m.colour);
      if (!m.text.empty()) {
        const bool left_side = px > (x0 + x1) / 2;
        out += "<text x=\"" + N(left_side ? px - 7 : px + 7) + "\" y=\"" + N(py - 6) + "\"" +
               (left_side ? " text-anchor=\"end\"" : "") + " font-size=\"10\">" +
               EscapeHtml(m.text) + "</text>";
      }
    }
    out += "</g>";
    out += "<rect x=\"" + N(x0) + "\" y=\"" + N(fr.y0) + "\" width=\"" + N(x1 - x0) +
           "\" height=\"" + N(ph) + "\" fill=\"none\" stroke=\"#9a9a9a\" stroke-width=\"1\"/>";
    if (i + 1 == f.panels.size()) {
      for (double v : xt.values) {
        out += "<text x=\"" + N(fr.Px(v)) + "\" y=\"" + N(fr.y1 + 15) +
               "\" text-anchor=\"middle\">" + TickLabel(v, xt) + "</text>";
      }
      if (!f.x.title.empty()) {
        out += "<text x=\"" + N((x0 + x1) / 2) + "\" y=\"" + N(fr.y1 + 32) +
               "\" text-anchor=\"middle\">" + EscapeHtml(f.x.title) + "</text>";
      }
    }
    y += ph + kPanelGap;
  }
  out += "</svg>";
  return out;
}

Series HistogramSeries(std::span<const double> values, double lo, double hi, int bins,
                       std::string label, std::string colour) {
  Series s;
  s.label = std::move(label);
  s.colour = std::move(colour);
  s.style = Style::kBars;
  bins = std::max(1, bins);
  if (!(hi > lo)) hi = lo + 1;
  for (int k = 0; k <= bins; ++k) s.x.push_back(lo + (hi - lo) * k / bins);
  s.y.assign(static_cast<size_t>(bins), 0.0);
  for (double v : values) {
    if (!std::isfinite(v) || v < lo || v > hi) continue;
    int k = static_cast<int>((v - lo) / (hi - lo) * bins);
    k = std::clamp(k, 0, bins - 1);
    s.y[static_cast<size_t>(k)] += 1;
  }
  return s;
}

}  // namespace rb::report
