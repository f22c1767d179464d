// One run's figure: measured readings and the fitted model over time, per channel, each
// with a residual strip (measured − model) beneath.
#include <algorithm>
#include <cmath>

#include "model/params.h"
#include "report/report.h"

namespace rb::report {
namespace {

struct Channel {
  const char* name;  // as in fit::ChannelFit::channel
  const char* axis;
  const char* unit;
  double model::Sample::*sample;
  const std::vector<double> fit::RunPrediction::*pred;
  DisplayUnit display;
};

/// The model's value at each sample: by index when the prediction was made at the samples'
/// own times (the usual case), else by linear interpolation in time.
std::vector<double> Align(const std::vector<model::Sample>& samples, const std::vector<double>& t,
                          const std::vector<double>& v) {
  std::vector<double> out(samples.size(), NAN);
  if (v.empty() || t.size() != v.size()) return out;
  if (t.size() == samples.size()) {
    bool same = true;
    for (size_t k = 0; k < t.size() && same; k += std::max<size_t>(1, t.size() / 16)) {
      same = std::fabs(t[k] - samples[k].t) <= 1e-9 * (1 + std::fabs(t[k]));
    }
    if (same) return v;
  }
  for (size_t k = 0; k < samples.size(); ++k) {
    const double x = samples[k].t;
    auto it = std::lower_bound(t.begin(), t.end(), x);
    if (it == t.end() || (it == t.begin() && *it != x)) continue;
    const size_t j = static_cast<size_t>(it - t.begin());
    if (*it == x || j == 0) {
      out[k] = v[j];
      continue;
    }
    const double w = (x - t[j - 1]) / (t[j] - t[j - 1]);
    out[k] = v[j - 1] + w * (v[j] - v[j - 1]);
  }
  return out;
}

/// A robust spread of the residuals (1.4826·MAD), for the strip's range when σ is unknown.
double RobustSpread(std::vector<double> r) {
  std::erase_if(r, [](double x) { return !std::isfinite(x); });
  if (r.empty()) return 0;
  auto med = [](std::vector<double>& x) {
    std::nth_element(x.begin(), x.begin() + static_cast<long>(x.size() / 2), x.end());
    return x[x.size() / 2];
  };
  const double m = med(r);
  for (double& x : r) x = std::fabs(x - m);
  return 1.4826 * med(r);
}

}  // namespace

Figure RunFigure(const ReportRun& run, const fit::RunFit* fit_run, const std::string& id) {
  const Channel channels[] = {
      {"speed", "speed [rpm]", "rpm", &model::Sample::speed, &fit::RunPrediction::speed,
       SpeedUnit()},
      {"current", "current [A]", "A", &model::Sample::current, &fit::RunPrediction::current,
       CurrentUnit()},
      {"voltage", "voltage [V]", "V", &model::Sample::voltage, &fit::RunPrediction::voltage,
       VoltageUnit()},
  };
  Figure fig;
  fig.id = id;
  fig.x.title = "time [s]";
  fig.width = 720;
  double height = 62;
  for (const Channel& ch : channels) {
    Series meas;
    meas.label = "measured";
    meas.style = Style::kDots;
    meas.colour = kColourMeasured;
    meas.width = 2.4;
    for (const model::Sample& s : run.samples) {
      const double v = s.*ch.sample;
      if (!std::isfinite(v)) continue;
      meas.x.push_back(s.t);
      meas.y.push_back(ch.display.from_si(v));
    }
    // A channel that read exactly zero throughout (the speed of a locked rotor) says nothing.
    const bool all_zero =
        std::all_of(meas.y.begin(), meas.y.end(), [](double v) { return v == 0; });
    if (meas.x.empty() || all_zero) continue;
    Panel main;
    main.y.title = ch.axis;
    main.weight = 3;
    main.series.push_back(std::move(meas));
    std::vector<double> model_v;
    if (run.prediction) {
      model_v = Align(run.samples, run.prediction->t, (*run.prediction).*ch.pred);
    }
    Series line;
    line.label = "fitted model";
    line.colour = SeriesColour(0);
    line.width = 1.7;
    Series resid;
    resid.style = Style::kDots;
    resid.colour = kColourResidual;
    resid.width = 2.2;
    for (size_t k = 0; k < model_v.size(); ++k) {
      if (!std::isfinite(model_v[k])) continue;
      const double t = run.samples[k].t;
      line.x.push_back(t);
      line.y.push_back(ch.display.from_si(model_v[k]));
      const double v = run.samples[k].*ch.sample;
      if (std::isfinite(v)) {
        resid.x.push_back(t);
        resid.y.push_back(ch.display.from_si(v) - ch.display.from_si(model_v[k]));
      }
    }
    const bool has_model = !line.x.empty();
    if (has_model) main.series.push_back(std::move(line));
    fig.panels.push_back(std::move(main));
    height += 150;
    if (!has_model || resid.x.empty()) continue;
    // The residual strip: symmetric about 0, ±2σ guides when the fit reports σ; its range
    // is limited to 6 spreads so that a few outliers do not flatten everything else.
    Panel strip;
    strip.weight = 1.25;
    strip.y.title = std::string("resid. [") + ch.unit + "]";
    strip.y.symmetric = true;
    double sigma = 0;
    if (fit_run) {
      for (const fit::ChannelFit& c : fit_run->channels) {
        if (c.channel == ch.name && std::isfinite(c.sigma)) sigma = ch.display.from_si(c.sigma);
      }
    }
    const double spread = sigma > 0 ? sigma : RobustSpread(resid.y);
    double max_abs = 0;
    for (double r : resid.y) max_abs = std::max(max_abs, std::fabs(r));
    if (spread > 0 && max_abs > 6 * spread) {
      strip.y.min = -6 * spread;
      strip.y.max = 6 * spread;
    }
    if (sigma > 0) {
      strip.lines.push_back({false, 2 * sigma, "+2σ", kColourGuide, true, false});
      strip.lines.push_back({false, -2 * sigma, "−2σ", kColourGuide, true, false});
    }
    strip.series.push_back(std::move(resid));
    fig.panels.push_back(std::move(strip));
    height += 62;
  }
  // What the rig did (output switched, a limit tripped, a gap in the link), across the
  // measured panels; labelled once, at the top.
  bool first = true;
  for (Panel& p : fig.panels) {
    if (p.weight < 2) continue;  // not on residual strips
    for (const storage::RunEvent& e : run.events) {
      const bool trip = e.kind == "limit_trip";
      if (!(e.kind == "output_on" || e.kind == "output_off" || trip || e.kind == "gap")) continue;
      std::string label = e.kind;
      std::replace(label.begin(), label.end(), '_', ' ');
      p.lines.push_back({true, e.t, first ? label : "", trip ? kColourLimit : kColourGuide,
                         true, false});
    }
    first = false;
  }
  fig.height = height;
  return fig;
}

}  // namespace rb::report
