// FitRuns: the engine's findings put into words — model choice, identifiability (relative
// standard error > 20 %, |correlation| > 0.98), what each run kind would fix, outliers.
#include <fmt/format.h>

#include <algorithm>
#include <set>

#include "fit/engine.h"
#include "model/units.h"

namespace rb::fit {
namespace {

using internal::EngineResult;
using model::RunKind;
using Sev = Diagnostic::Severity;

constexpr double kRelSeWarn = 0.20;
constexpr double kCorrWarn = 0.98;

const char* Words(int i) {
  switch (i) {
    case model::kR: return "the winding resistance R";
    case model::kL: return "the inductance L";
    case model::kKe: return "the motor constant Ke (= Kt)";
    case model::kJ: return "the rotor inertia J";
    case model::kTc: return "the running friction torque Tc";
    case model::kB: return "the viscous friction b";
    case model::kVb: return "the brush drop Vb";
  }
  return "?";
}

std::string Name(int i) { return std::string(model::kParamNames[static_cast<size_t>(i)]); }

struct Have {
  bool locked = false, spin = false, coast = false, coast_v = false, steady = false;
  bool current = false;
  int spin_levels = 0;
};

Have WhatWeHave(const EngineResult& E) {
  Have h;
  std::vector<double> levels;
  for (const internal::PreparedRun* p : E.runs_used) {
    h.current = h.current || p->has_current;
    switch (p->kind) {
      case RunKind::kLocked: h.locked = true; break;
      case RunKind::kSpinUp:
        h.spin = h.spin || p->has_current;
        break;
      case RunKind::kCoastDown:
        h.coast = true;
        h.coast_v = h.coast_v || p->has_voltage;
        break;
      case RunKind::kSteady: h.steady = true; break;
      default: break;
    }
  }
  h.spin_levels = E.start.voltage_levels;
  return h;
}

/// Which run would let the data determine parameter i.
std::string Suggest(int i, const Have& h, int partner = -1) {
  auto both = [&](int a, int b) {
    return (i == a && partner == b) || (i == b && partner == a);
  };
  if (both(model::kTc, model::kB)) {
    return h.coast ? "add a coast-down that runs down to a stop (friction at low speed separates "
                     "Tc from b), or steady runs at two clearly different voltages"
                   : "add an open-circuit coast-down to a stop";
  }
  if (both(model::kR, model::kVb)) {
    return "add locked-rotor pulses at two or more clearly different currents, or spin-ups at "
           "two voltage levels";
  }
  switch (i) {
    case model::kR:
      if (h.locked) {
        return "add locked-rotor pulses at more rotor positions (the resistance varies with the "
               "segments the brushes touch) and calibrate the current sensor";
      }
      return "add a locked-rotor run (several short pulses at different rotor positions) or a "
             "spin-up with current and terminal voltage logged";
    case model::kKe:
      return h.coast ? "log the terminal voltage during the coast-down (an open-circuit "
                       "generator test) or add a spin-up with current and voltage logged"
                     : "add a spin-up with current and voltage logged, or a coast-down with the "
                       "terminal voltage logged";
    case model::kJ:
    case model::kTc:
    case model::kB:
      if (!h.spin && !h.current) {
        return "add a spin-up with the current logged: with Kt = Ke the current sets the torque "
               "scale that a speed trace alone cannot";
      }
      if (!h.coast) return "add an open-circuit coast-down to a stop";
      return "add a longer coast-down, to a stop";
    case model::kVb:
      return "add a run at a second, clearly different voltage level (or locked-rotor pulses at "
             "two currents)";
    case model::kL:
      return "sample the current faster during a locked-rotor pulse (at least 10 samples per "
             "L/R, typically ≥ 20 kHz for small motors) or fix L = 0 (model basic)";
  }
  return "";
}

}  // namespace

Result<FitSummary> FitRuns(const std::vector<RunData>& runs, const FitOptions& options) {
  Result<EngineResult> er = internal::RunEngine(runs, options);
  if (!er.ok()) return er.status();
  EngineResult& E = *er;
  FitSummary& S = E.summary;
  const Have have = WhatWeHave(E);
  auto add = [&](Sev sev, std::string param, std::string msg, std::string sug = "") {
    S.diagnostics.push_back({sev, std::move(param), std::move(msg), std::move(sug)});
  };

  // Nothing identifiable at all: an error, nothing to store.
  int identified = 0;
  for (const ParamResult& p : S.params) identified += p.fitted && p.identified;
  if (identified == 0) {
    std::string kinds;
    std::set<std::string> seen;
    for (const internal::PreparedRun* p : E.runs_used) {
      seen.insert(std::string(model::RunKindName(p->kind)));
    }
    for (const std::string& k : seen) kinds += (kinds.empty() ? "" : ", ") + k;
    std::string what = "these runs (" + kinds + ") cannot determine any motor constant";
    if (have.coast && !have.spin && !have.locked) {
      what += ": a coast-down alone gives only the ratios b/J and Tc/J, not R or Ke";
    } else if (have.steady && !have.spin && !have.locked) {
      what += ": a steady state alone is one point on the line V = R·I + Ke·ω";
    }
    return Status::FailedPrecondition(what + "; " + Suggest(model::kR, have) +
                                      (have.coast ? "" : ", and an open-circuit coast-down"));
  }

  // ---- Model choice.
  {
    std::string why;
    if (E.model_chosen_automatically) {
      why = fmt::format("model {} chosen from the data: ", E.spec.Name());
      why += E.spec.brush_drop ? fmt::format("brush drop fitted ({} voltage levels)", E.start.voltage_levels)
                               : (E.start.voltage_levels >= 2 ? "no brush drop (R not supported)"
                                                              : "brush drop held at 0 (one voltage level; Vb needs two)");
      why += E.spec.inductance ? "; inductance fitted (the current rise after switch-on is resolved)"
                               : "; inductance held at 0 (the current is not sampled fast enough to "
                                 "see L/R)";
      if (E.spec.heating) why += "; winding heating fitted (locked-rotor resistance rises during the pulses)";
    } else {
      why = fmt::format("model {} as requested", E.spec.Name());
    }
    add(Sev::kInfo, "", why);
  }
  for (const std::string& s : E.skipped) add(Sev::kInfo, "", s);
  if (!E.converged) {
    add(Sev::kWarning, "", "the solver stopped before converging (" + S.termination +
                               "); the estimates may not be the best fit",
        "check that the runs belong to this motor and were imported with the right kinds");
  }
  if (E.start.kappa != 1.0) {
    add(Sev::kInfo, "R_ohm",
        fmt::format("R is the resistance averaged over rotor position ({} locked-rotor positions); "
                    "while turning the brushes see {:.2f} % less (conductance averages)",
                    E.start.locked_positions, 100 * (1 - E.start.kappa)));
  } else if (S.params[model::kR].identified && S.params[model::kR].fitted && !have.locked) {
    add(Sev::kInfo, "R_ohm",
        "R is the effective resistance while turning (no locked-rotor positions to average); it "
        "can sit a few percent below the position-averaged resistance of a motor with few "
        "commutator segments",
        "add locked-rotor pulses at four or more rotor positions");
  }

  // ---- Not determinable.
  for (int i = 0; i < model::kNumParams; ++i) {
    if (!E.unidentified[static_cast<size_t>(i)]) continue;
    std::string msg = std::string("these runs cannot determine ") + Words(i);
    if ((i == model::kR || i == model::kKe) && have.coast && !have.spin && !have.locked) {
      msg += i == model::kR ? " (a coast-down runs at one current, if any: R cannot be separated "
                              "from the brush drop and the back-EMF)"
                            : " (a coast-down without the terminal voltage logged gives speed "
                              "only)";
    }
    if ((i == model::kJ || i == model::kTc || i == model::kB) && !have.current) {
      msg += " (a speed trace alone fixes only ratios such as b/J and Tc/J)";
    }
    add(Sev::kWarning, Name(i), msg + "; no value is given", Suggest(i, have));
  }

  // ---- Weakly determined: relative SE and correlations.
  const model::ParamCovariance corr = S.Correlation();
  for (int i = 0; i < model::kNumParams; ++i) {
    const ParamResult& p = S.params[static_cast<size_t>(i)];
    if (!p.fitted || !p.identified) continue;
    const double rel = E.rel_se[static_cast<size_t>(i)];
    if (rel > kRelSeWarn) {
      add(Sev::kWarning, Name(i),
          fmt::format("{} is poorly determined: standard error {:.0f} % of the value", Words(i),
                      100 * rel),
          Suggest(i, have));
    }
    if (i == model::kVb && p.fitted && p.value <= 0) {
      add(Sev::kWarning, Name(i),
          "the brush drop came out negative, which is not physical: the data show none; refit "
          "with --model basic");
    }
  }
  for (int i = 0; i < model::kNumParams; ++i) {
    for (int k = i + 1; k < model::kNumParams; ++k) {
      const ParamResult &a = S.params[static_cast<size_t>(i)], &b = S.params[static_cast<size_t>(k)];
      if (!a.fitted || !b.fitted || !a.identified || !b.identified) continue;
      if (std::fabs(corr(i, k)) > kCorrWarn) {
        // Strongly correlated but both well determined: the covariance carries the link into
        // every derived figure, so this is worth knowing, not a warning.
        const double worst = std::max(E.rel_se[static_cast<size_t>(i)], E.rel_se[static_cast<size_t>(k)]);
        if (worst < kRelSeWarn / 10) {
          add(Sev::kInfo, Name(i),
              fmt::format("{} and {} are strongly correlated in these runs ({:+.3f}), but both are "
                          "determined to within {:.2g} %; derived figures carry the correlation",
                          Words(i), Words(k), corr(i, k), 100 * worst));
        } else {
          add(Sev::kWarning, Name(i),
              fmt::format("{} and {} are hard to tell apart in these runs (correlation {:+.3f})",
                          Words(i), Words(k), corr(i, k)),
              Suggest(i, have, k));
        }
      }
    }
  }

  // ---- Outliers and noise.
  for (const RunFit& r : S.runs) {
    for (const ChannelFit& c : r.channels) {
      if (c.outliers == 0) continue;
      add(Sev::kInfo, "",
          fmt::format("run {}: {} of {} {} readings set aside as outliers ({})", r.run_id,
                      c.outliers, c.n, c.channel,
                      c.channel == "speed" ? "e.g. a missed tach mark reads half the speed"
                                           : "interference spikes or dropouts"));
    }
  }
  if (!E.any_calibration) {
    add(Sev::kInfo, "",
        "no instrument calibration is recorded for these runs: the combined uncertainty holds "
        "the statistical part only (a current sensor's gain error moves R, J, Tc and b by the "
        "same fraction)",
        "record the sensors' calibration (gain and offset with their uncertainties)");
  }
  if (E.s2 > 4) {
    add(Sev::kWarning, "",
        fmt::format("the model leaves {:.1f}× more scatter than the instrument noise suggests; "
                    "check run kinds and voltages",
                    std::sqrt(E.s2)));
  }
  return std::move(E.summary);
}

}  // namespace rb::fit
