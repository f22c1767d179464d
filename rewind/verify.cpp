// Verification of a rewound motor against its plan, and hints when it does not match.
//
// Each parameter: z = (measured − predicted)/√(u_pred² + u_meas²), combined standard
// uncertainties (the plan's carries the baseline fit, winding tolerances and the scaling
// model; the new fit's its own budget). |z| ≤ 2 matches, > 3 does not, in between is
// marginal. R and Ke decide the overall verdict: they are what the winding sets; J, Tc, b
// and Vb belong to the bearings and brushes and are reported only.
//
// Hints compare the measured ratios rR = R/R_plan and rK = Ke/Ke_plan (and the change of
// b) with the signature of each cause, in log space, with the uncertainties:
//   turn count off     rR = rK = N_actual/N_plan (same wire and mean turn)
//   wrong wire         rR = A_plan/A_actual for the next size up or down, rK = 1
//   one coil open      ring circuit (model/winding_faults.h): 3 coils → rR ≈ 1.59–1.80,
//                      rK ≈ 0.99–1.00 for brush widths 0–0.3 of a pitch
//   one coil reversed  3 coils → rR = 1, rK = 1/3, and a large extra drag (circulating
//                      current) that the fit shows as viscous friction
//   poor joint         one coil's resistance raised: 1 < rR < the open-coil ratio, rK = 1
// A cause with a free parameter (how many turns, how bad a joint) pays 2 in the score
// (an AIC-style penalty), so a fixed signature that fits wins over a family that can be
// bent to fit.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "model/units.h"
#include "model/commutator.h"
#include "model/winding_faults.h"
#include "rewind/rewind.h"

namespace rb::rewind {
namespace {

double Sq(double x) { return x * x; }

constexpr double kPlausible = 5.99;  // χ²(2 dof) at 95 %
constexpr double kFreeParameterPenalty = 2.0;

std::string Verdict(double z, const VerifyOptions& o) {
  const double a = std::fabs(z);
  if (a <= o.match_z) return "matches";
  if (a <= o.mismatch_z) return "marginal";
  return "does not match";
}

ParamCheck Compare(std::string name, double pred, double pred_u, double meas, double meas_u,
                   bool decides, const VerifyOptions& o) {
  ParamCheck c;
  c.name = std::move(name);
  c.predicted = pred;
  c.predicted_u = pred_u;
  c.measured = meas;
  c.measured_u = meas_u;
  c.decides = decides;
  const double u = std::hypot(pred_u, meas_u);
  if (!(u > 0) || !std::isfinite(pred) || !std::isfinite(meas)) {
    c.verdict = "not compared";
    return c;
  }
  c.z = (meas - pred) / u;
  c.verdict = Verdict(c.z, o);
  return c;
}

/// Measured ratios and their log-space standard uncertainties.
struct Ratios {
  double lr = 0, lk = 0;  ///< ln(R/R_plan), ln(Ke/Ke_plan)
  double sr = 0, sk = 0;
  double db = 0, sb = 0;  ///< b − b_plan and its uncertainty [N·m·s/rad]; sb = 0: no b
  double drag_unit = 0;   ///< Ke²/R of the planned motor [N·m·s/rad]
};

double Distance2(const Ratios& m, double hr, double hr_u, double hk, double hk_u,
                 double drag) {
  double d2 = Sq((m.lr - std::log(hr)) / std::hypot(m.sr, hr_u / hr)) +
              Sq((m.lk - std::log(hk)) / std::hypot(m.sk, hk_u / hk));
  if (m.sb > 0) d2 += Sq((m.db - drag * m.drag_unit) / m.sb);
  return d2;
}

/// Neighbouring catalogue sizes of a wire: ±1 AWG, or ±1 step of the metric series. A mix-up
/// by two sizes (26 % in diameter) shows against the old wire by eye; one size (12 %) does
/// not — our judgement, no source. (Two sizes would also mimic an open coil's R × 1.6.)
std::vector<model::Wire> Neighbours(const model::Wire& w) {
  std::vector<model::Wire> out;
  if (w.awg >= 0) {
    for (int d : {-1, 1}) {
      Result<model::Wire> n = model::AwgWire(w.awg + d, w.insulation);
      if (n.ok()) out.push_back(*n);
    }
    return out;
  }
  const std::vector<model::Wire> cat = model::WireCatalogue({.awg = false});
  size_t at = 0;
  for (size_t i = 0; i < cat.size(); ++i) {
    if (std::fabs(cat[i].d_nom - w.d_nom) < std::fabs(cat[at].d_nom - w.d_nom)) at = i;
  }
  for (int d : {-1, 1}) {
    const long i = static_cast<long>(at) + d;
    if (i >= 0 && i < static_cast<long>(cat.size()) &&
        std::fabs(cat[static_cast<size_t>(i)].d_nom - w.d_nom) > 1e-9) {
      out.push_back(cat[static_cast<size_t>(i)]);
    }
  }
  return out;
}

std::vector<Hint> Hints(const Plan& plan, const Ratios& m) {
  const Prediction& p = plan.prediction;
  const model::Winding& w = p.new_winding;
  const double rr = std::exp(m.lr), rk = std::exp(m.lk);
  std::vector<Hint> hints;

  // Turn count off: rR = rK = x; weighted mean of the two log ratios.
  {
    const double wr = 1 / Sq(m.sr), wk = 1 / Sq(m.sk);
    const double x = (m.lr * wr + m.lk * wk) / (wr + wk);
    const double turns = w.turns * std::exp(x);
    if (std::lround(turns) != w.turns) {
      hints.push_back(
          {"turn count off",
           fmt::format("Ke is {:.2f} × and R {:.2f} × the plan, both as for about {:.0f} turns "
                       "per coil instead of {} ({:+.0f} %); recount a coil, or check that "
                       "every coil got the same count",
                       rk, rr, turns, w.turns, 100 * (std::exp(x) - 1)),
           Distance2(m, std::exp(x), 0, std::exp(x), 0, 0) + kFreeParameterPenalty});
    }
  }
  // Wrong wire: a neighbouring size with the planned turns.
  {
    Hint best{"wrong wire", "", std::numeric_limits<double>::infinity()};
    for (const model::Wire& n : Neighbours(w.wire)) {
      const double hr = w.wire.Area() / n.Area();
      const double d2 = Distance2(m, hr, hr * n.AreaRelativeU(), 1.0, 0, 0);
      if (d2 < best.distance) {
        best.distance = d2;
        best.detail = fmt::format(
            "R is {:.2f} × the plan with Ke as planned ({:.2f} ×): {} instead of {} gives "
            "{:.2f} ×; measure the bare copper with a micrometer after scraping the enamel",
            rr, rk, n.Name(), w.wire.Name(), hr);
      }
    }
    if (std::isfinite(best.distance)) hints.push_back(best);
  }
  // Ring faults: an open or reversed coil.
  const std::vector<FaultHypothesis> faults = RingFaultHypotheses(w.coils);
  for (const FaultHypothesis& f : faults) {
    std::string detail;
    if (f.cause == "one coil open") {
      detail = fmt::format(
          "R is {:.2f} × and Ke {:.2f} × the plan; with one coil open (or a joint that never "
          "took) a {}-coil armature measures R × {:.2f} and Ke × {:.2f}; measure bar to bar: "
          "the segment pair across the open coil reads about twice the others",
          rr, rk, w.coils, f.r_ratio, f.ke_ratio);
    } else {
      detail = fmt::format(
          "Ke is {:.2f} × the plan (R {:.2f} ×); one coil wound or connected backwards "
          "gives Ke × {:.2f} with R unchanged on a {}-coil armature, and a current "
          "circulating inside the winding that heats it and shows up as a large viscous "
          "drag (b up by about {:.3g} N·m·s/rad); check each coil's start and finish",
          rk, rr, f.ke_ratio, w.coils, f.drag * m.drag_unit);
    }
    hints.push_back({f.cause, detail,
                     Distance2(m, f.r_ratio, f.r_ratio_u, f.ke_ratio, f.ke_ratio_u, f.drag)});
  }
  // Poor joint: one coil's resistance raised by x·Rc, between healthy and open.
  {
    const double open_ratio = faults.empty() ? 2.0 : faults.front().r_ratio;
    if (rr > 1.0 && rr < open_ratio) {
      double lo = 0, hi = 1e3;
      for (int it = 0; it < 40; ++it) {
        const double mid = 0.5 * (lo + hi);
        const double r = model::RingFaultSignature(w.coils, p.options.brush_fraction, 0,
                                                   {1.0 + mid, 1.0}).resistance_ratio;
        (r < rr ? lo : hi) = mid;
      }
      const double x = 0.5 * (lo + hi);
      const double rc = p.predicted.value.R /
                        model::MeanBrushResistanceFactor(w.coils, p.options.brush_fraction);
      hints.push_back(
          {"poor joint",
           fmt::format("R is {:.2f} × the plan with Ke as planned ({:.2f} ×): a joint adding "
                       "about {:.2g} Ω ({:.1f} × one coil) in series with one coil does that; "
                       "reflow the joints at the commutator tangs, then measure bar to bar",
                       rr, rk, x * rc, x),
           Distance2(m, rr, 0, 1.0, 0, 0) + kFreeParameterPenalty});
    }
  }
  std::sort(hints.begin(), hints.end(),
            [](const Hint& a, const Hint& b) { return a.distance < b.distance; });
  std::vector<Hint> plausible;
  for (const Hint& h : hints) {
    if (h.distance <= kPlausible + kFreeParameterPenalty) plausible.push_back(h);
  }
  if (plausible.empty()) {
    Hint none{"no single cause",
              fmt::format("R is {:.2f} × and Ke {:.2f} × the plan, which none of: turn count, "
                          "wire size, an open, reversed or poorly joined coil explains alone; "
                          "check the turn count, the wire and every joint",
                          rr, rk),
              std::numeric_limits<double>::infinity()};
    plausible.push_back(none);
  }
  return plausible;
}

}  // namespace

std::vector<FaultHypothesis> RingFaultHypotheses(int coils) {
  std::vector<FaultHypothesis> out;
  const model::CoilState open{std::numeric_limits<double>::infinity(), 1.0};
  const model::CoilState reversed{1.0, -1.0};
  for (auto [cause, state] : {std::pair{"one coil open", open}, std::pair{"one coil reversed", reversed}}) {
    // Brush width unknown: spread over 0–0.3 of a pitch, rectangular.
    const model::FaultSignature a = model::RingFaultSignature(coils, 0.0, 0, state);
    const model::FaultSignature b = model::RingFaultSignature(coils, 0.3, 0, state);
    FaultHypothesis h;
    h.cause = cause;
    h.r_ratio = 0.5 * (a.resistance_ratio + b.resistance_ratio);
    h.r_ratio_u = std::fabs(a.resistance_ratio - b.resistance_ratio) / (2 * std::sqrt(3.0));
    h.ke_ratio = 0.5 * (a.ke_ratio + b.ke_ratio);
    h.ke_ratio_u = std::fabs(a.ke_ratio - b.ke_ratio) / (2 * std::sqrt(3.0));
    h.drag = 0.5 * (a.drag + b.drag);
    out.push_back(h);
  }
  return out;
}

Verification VerifyRewind(const Plan& plan, const fit::FitSummary& after,
                          const std::vector<model::Sample>* loaded_run,
                          const VerifyOptions& options) {
  Verification v;
  const Prediction& p = plan.prediction;
  const model::MotorEstimate& pred = p.predicted;
  const Baseline measured = BaselineFromFit(after, std::nullopt);
  const model::MotorEstimate& meas = measured.estimate;
  auto u = [](const model::MotorEstimate& e, int i) { return std::sqrt(std::max(0.0, e.cov(i, i))); };

  for (int i : {model::kR, model::kKe, model::kTc, model::kB, model::kJ, model::kVb, model::kL}) {
    const bool fitted = after.params[static_cast<size_t>(i)].fitted;
    const bool decides = i == model::kR || i == model::kKe;
    if (!fitted && !decides) continue;
    v.params.push_back(Compare(std::string(model::kParamNames[static_cast<size_t>(i)]),
                               model::Get(pred.value, i), u(pred, i), model::Get(meas.value, i),
                               u(meas, i), decides, options));
  }
  // Figures at the plan's voltage (reported, not deciding).
  const double volts = p.options.voltage;
  const model::CharacteristicsU after_char = model::ComputeCharacteristicsU(meas, volts);
  const std::pair<model::CharacteristicIndex, const char*> figs[] = {
      {model::kNoLoadSpeed, "no_load_speed_rad_s"}, {model::kNoLoadCurrent, "no_load_current_A"},
      {model::kStallCurrent, "stall_current_A"},    {model::kStallTorque, "stall_torque_N_m"},
      {model::kMaxPower, "max_power_W"},            {model::kMaxEfficiency, "max_efficiency"}};
  for (auto [idx, name] : figs) {
    const model::Uncertain a = p.predicted_char.Get(idx), b = after_char.Get(idx);
    v.figures.push_back(Compare(name, a.value, a.u, b.value, b.u, false, options));
  }

  bool any_bad = false, all_good = true;
  for (const ParamCheck& c : v.params) {
    if (!c.decides) continue;
    if (c.verdict == "does not match") any_bad = true;
    if (c.verdict != "matches") all_good = false;
  }
  v.verdict = any_bad ? "does not match" : all_good ? "matches" : "marginal";

  if (plan.load && plan.loaded && loaded_run) {
    Result<FanLoadEstimate> l = EstimateFanLoad(meas, *loaded_run, std::nullopt);
    if (l.ok()) {
      ParamCheck c = Compare("loaded_speed_rad_s", plan.loaded->predicted.speed,
                             plan.loaded->speed_u, l->speed, 0.0, false, options);
      v.loaded_speed = c;
    }
  }

  if (v.verdict != "matches") {
    Ratios m;
    m.lr = std::log(meas.value.R / pred.value.R);
    m.lk = std::log(meas.value.Ke / pred.value.Ke);
    m.sr = std::hypot(u(pred, model::kR) / pred.value.R, u(meas, model::kR) / meas.value.R);
    m.sk = std::hypot(u(pred, model::kKe) / pred.value.Ke, u(meas, model::kKe) / meas.value.Ke);
    m.drag_unit = Sq(pred.value.Ke) / pred.value.R;
    if (after.params[model::kB].fitted) {
      m.db = meas.value.b - pred.value.b;
      // The mechanics may change a little in a rewind (new brushes seating): allow
      // ±50 % of the planned b besides the two fits' uncertainties (our judgement).
      m.sb = std::sqrt(Sq(u(pred, model::kB)) + Sq(u(meas, model::kB)) + Sq(0.5 * pred.value.b));
      if (!(m.sb > 0)) m.sb = 0;
    }
    v.hints = Hints(plan, m);
  }
  return v;
}

}  // namespace rb::rewind
