// rotorbench report: plots as inline SVG, in one plain technical look.
//
// A Figure is one or more Panels stacked top to bottom that share the x axis (a main plot
// with a residual strip beneath, say). Each panel holds Series (lines, dashed lines, dots,
// uncertainty bands, histogram bars), point Markers and reference lines (limits, ±2σ).
// Axes get "nice" ticks (report/ticks.h), titles with units, light grid lines; a legend
// sits above the plot area. Colours come from one palette (colour-blind safe, Okabe & Ito
// 2008) so that every plot of a report, and of other reports, agrees. Dense data are
// thinned to what the pixels can show (min/max per pixel column for lines, one dot per
// pixel). The SVG needs no scripts, fonts or external files. Values are plotted as given:
// convert to trade units before (model/units.h). Pure functions; thread-safe.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <vector>

namespace rb::report {

// ---- Colours
/// Series colours in order of use: blue, vermillion, bluish green, reddish purple, orange,
/// sky blue, black. SeriesColour(i) cycles through them.
const char* SeriesColour(int i);
inline constexpr const char* kColourMeasured = "#8c8c8c";  ///< measured readings (dots)
inline constexpr const char* kColourResidual = "#555555";  ///< residuals (dots)
inline constexpr const char* kColourLimit = "#b2182b";     ///< limits and tolerances
inline constexpr const char* kColourGuide = "#9a9a9a";     ///< ±2σ lines, zero lines

// ---- What a panel shows
enum class Style {
  kLine,    ///< a polyline through (x, y); NaN breaks the line
  kDashed,  ///< the same, dashed
  kDots,    ///< one dot per point
  kBand,    ///< filled area between y (lower edge) and y2 (upper edge) over x
  kBars,    ///< histogram bars: x holds n + 1 bin edges, y the n bar heights
};

struct Series {
  std::string label;  ///< legend text; empty = not in the legend
  Style style = Style::kLine;
  std::string colour;  ///< CSS colour; empty = SeriesColour(index of the series)
  std::vector<double> x, y;
  std::vector<double> y2;  ///< kBand only: the upper edge
  double width = 1.6;      ///< line width or dot diameter [px]
  double opacity = 1.0;    ///< 0..1 (bands default to a light fill: use 0.18–0.25)
};

/// A single marked point: an operating point, a nominal value.
struct Marker {
  double x = 0, y = 0;
  std::string colour;  ///< empty = SeriesColour(0)
  char shape = 'o';    ///< 'o' circle, 's' square, 'd' diamond, '^' triangle, 'v'
  std::string legend;  ///< legend text (entries with equal text and shape appear once)
  std::string text;    ///< a short label written next to the point; empty = none
};

/// A straight reference line across the panel: a limit, a nominal value, ±2σ.
struct RefLine {
  bool vertical = true;  ///< true: x = at; false: y = at
  double at = 0;
  std::string label;  ///< written at the line's end; also a legend entry when legend = true
  std::string colour = kColourLimit;
  bool dashed = true;
  bool legend = false;
};

struct Axis {
  std::string title;               ///< quantity and unit, e.g. "speed [rpm]"
  std::optional<double> min, max;  ///< fixed ends; otherwise from the data (nice ticks)
  bool include_zero = false;       ///< stretch the range to include 0
  bool symmetric = false;          ///< a range symmetric about 0 (residuals)
};

struct Panel {
  Axis y;
  std::vector<Series> series;
  std::vector<Marker> markers;
  std::vector<RefLine> lines;
  double weight = 1.0;  ///< share of the figure's height among panels
};

struct Figure {
  std::string id;     ///< element id of the <svg> (unique in a page)
  std::string title;  ///< drawn above the legend; empty = none
  Axis x;
  std::vector<Panel> panels;         ///< top to bottom; the x axis labels sit under the last
  double width = 720, height = 380;  ///< size in CSS px (also the viewBox)
};

/// The figure as one <svg class="plot"> element (no XML prolog, no external references).
std::string RenderSvg(const Figure& figure);

/// Bars of a histogram of `values` over [lo, hi] in `bins` equal bins; values outside the
/// range are not counted (choose the range to include them, and the limits).
Series HistogramSeries(std::span<const double> values, double lo, double hi, int bins,
                       std::string label = "", std::string colour = "");

}  // namespace rb::report
