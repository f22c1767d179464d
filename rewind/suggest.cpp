// The inverse problem: which turn counts and wires reach a target and fit the slots.
//
// Ke ∝ N, so a Ke (Kv) target fixes the turn count N* = N_old·Ke_target/Ke_old for any
// wire. A no-load speed target at a voltage also depends on R (through the friction
// current), which depends on the wire: N* is found by bisection, the no-load speed being
// monotone in N. Both integer neighbours of N* are tried with every catalogue wire and
// 1…max_strands strands; the ones meeting the target within the tolerance, the current
// limit and the slot space are ranked.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <tuple>

#include "rewind/rewind.h"

namespace rb::rewind {
namespace {

double Achieved(const Prediction& p, const SuggestTarget& t) {
  return t.kind == SuggestTarget::Kind::kKe ? p.predicted.value.Ke
                                            : p.predicted_char.nominal.no_load_speed;
}

}  // namespace

Result<std::vector<Suggestion>> SuggestWindings(const Baseline& baseline,
                                                const model::Winding& old_w,
                                                const SuggestTarget& target,
                                                const SuggestOptions& options) {
  if (!(target.value > 0)) return Status::InvalidArgument("the target must be > 0");
  if (!(target.voltage > 0)) {
    return Status::InvalidArgument("a supply voltage > 0 is needed for the suggestions");
  }
  PlanOptions plan = options.plan;
  plan.voltage = target.voltage;
  const std::vector<model::Wire> wires = model::WireCatalogue(options.catalogue);
  const int max_turns = std::max(1000, 50 * old_w.turns);

  auto predict = [&](int turns, int strands, const model::Wire& wire) -> Result<Prediction> {
    model::Winding w;
    w.coils = old_w.coils;
    w.turns = turns;
    w.strands = strands;
    w.wire = wire;
    return PredictRewind(baseline, old_w, w, plan);
  };

  std::vector<Suggestion> found;
  for (const model::Wire& wire : wires) {
    for (int strands = 1; strands <= std::max(1, options.max_strands); ++strands) {
      double n_star = NAN;
      if (target.kind == SuggestTarget::Kind::kKe) {
        n_star = old_w.turns * target.value / baseline.estimate.value.Ke;
      } else {
        // The no-load speed falls as N grows: bisect on a continuous N with R and Ke
        // scaled from a one-turn prediction; the integer neighbours are predicted exactly.
        Result<Prediction> one = predict(1, strands, wire);
        if (!one.ok()) return one.status();
        auto speed_at = [&](double n) {
          model::MotorParams q = one->predicted.value;
          q.R *= n;
          q.Ke *= n;
          q.L *= n * n;
          return model::ComputeCharacteristics(q, target.voltage).no_load_speed;
        };
        double lo = 0.01, hi = max_turns;
        if (speed_at(lo) < target.value || speed_at(hi) > target.value) continue;
        for (int it = 0; it < 100; ++it) {
          const double mid = std::sqrt(lo * hi);
          (speed_at(mid) > target.value ? lo : hi) = mid;
        }
        n_star = std::sqrt(lo * hi);
      }
      if (!(n_star > 0) || n_star > max_turns) continue;
      for (int turns : {static_cast<int>(std::floor(n_star)), static_cast<int>(std::ceil(n_star))}) {
        if (turns < 1) continue;
        Result<Prediction> p = predict(turns, strands, wire);
        if (!p.ok()) return p.status();
        if (p->fill.verdict == FillVerdict::kWillNotFit) continue;
        Suggestion s;
        s.achieved = Achieved(*p, target);
        s.error = (s.achieved - target.value) / target.value;
        if (std::fabs(s.error) > options.tolerance) continue;
        if (target.max_stall_current &&
            p->predicted_char.nominal.stall_current > *target.max_stall_current) {
          continue;
        }
        s.prediction = std::move(*p);
        found.push_back(std::move(s));
      }
    }
  }
  // For each (turns, strands, verdict) keep the thickest wire: more copper, less loss.
  std::map<std::tuple<int, int, int>, Suggestion> best;
  for (Suggestion& s : found) {
    const model::Winding& w = s.prediction.new_winding;
    const auto key = std::make_tuple(w.turns, w.strands, static_cast<int>(s.prediction.fill.verdict));
    auto it = best.find(key);
    if (it == best.end() || w.wire.d_nom > it->second.prediction.new_winding.wire.d_nom) {
      best[key] = std::move(s);
    }
  }
  std::vector<Suggestion> out;
  for (auto& [k, s] : best) out.push_back(std::move(s));
  std::sort(out.begin(), out.end(), [](const Suggestion& a, const Suggestion& b) {
    if (a.prediction.fill.verdict != b.prediction.fill.verdict) {
      return a.prediction.fill.verdict < b.prediction.fill.verdict;
    }
    // Closeness to the target in whole percent, then the lowest resistance.
    const double ea = std::round(100 * std::fabs(a.error)), eb = std::round(100 * std::fabs(b.error));
    if (ea != eb) return ea < eb;
    return a.prediction.predicted.value.R < b.prediction.predicted.value.R;
  });
  if (static_cast<int>(out.size()) > options.limit) out.resize(static_cast<size_t>(options.limit));
  return out;
}

}  // namespace rb::rewind
