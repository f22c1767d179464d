// rotorbench report: axis ranges and "nice" tick values for plots.
//
// Ticks are k·step for whole k, with step = 1, 2 or 5 × 10^n (the "nice numbers" scheme),
// chosen so that about `target` ticks cover the data. Degenerate input is handled: a
// single value or zero span gets a small range around it, NaN/inf values are ignored, and
// a reversed range is swapped. Labels carry just enough decimals to tell ticks apart.
// Pure functions; thread-safe.
#pragma once

#include <string>
#include <vector>

namespace rb::report {

struct AxisTicks {
  double lo = 0, hi = 1;       ///< the axis range (the data range, widened to whole ticks)
  double step = 0.2;           ///< distance between ticks
  std::vector<double> values;  ///< tick positions, increasing, within [lo, hi]
  int decimals = 1;            ///< digits after the point in labels (fixed notation)
  bool scientific = false;     ///< labels in d.dde±n form (very large or small values)
};

/// Ticks for data spanning [lo, hi]; about `target` (≥ 2) ticks. The axis range is widened
/// to the nearest ticks outside the data so that every tick is a labelled round number.
AxisTicks NiceTicks(double lo, double hi, int target = 6);

/// Ticks for a plot axis showing data in [lo, hi]: the nice ticks, with the axis widened to
/// the outer ticks when that adds at most `max_widen` of the data span on a side; otherwise
/// the axis is the data range padded by 3 % on each side, and only the ticks inside it are
/// kept (so that a tiny negative reading does not add a whole empty step below zero).
AxisTicks PlotTicks(double lo, double hi, int target = 6, double max_widen = 0.1);

/// The label of tick value v ("0", "2.5", "-0.04", "1.5e-9"); never "-0".
std::string TickLabel(double v, const AxisTicks& ticks);

/// The smallest nice number (1, 2, 5 × 10^n) ≥ x (round = false), or nearest (round = true).
double NiceNumber(double x, bool round);

}  // namespace rb::report
