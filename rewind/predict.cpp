// Baseline, slot fill and the scaling prediction of a rewound motor.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "model/units.h"
#include "rewind/rewind.h"

namespace rb::rewind {
namespace {

using model::kNumParams;

double Sq(double x) { return x * x; }

}  // namespace

Baseline BaselineFromFit(const fit::FitSummary& fit, std::optional<std::int64_t> fit_id) {
  Baseline b;
  b.fit_id = fit_id;
  b.source = fit_id ? fmt::format("fit {}", *fit_id) : std::string("fit");
  b.motor = fit.motor;
  b.estimate = fit.Estimate();
  // Use the 20 °C resistance when the fitter normalised it: scale the R row and column.
  if (fit.R20 && std::isfinite(*fit.R20) && *fit.R20 > 0 && b.estimate.value.R > 0) {
    const double s = *fit.R20 / b.estimate.value.R;
    b.estimate.value.R = *fit.R20;
    b.estimate.cov.row(model::kR) *= s;
    b.estimate.cov.col(model::kR) *= s;
    if (fit.R20_u && std::isfinite(*fit.R20_u) && *fit.R20_u > 0) {
      b.estimate.cov(model::kR, model::kR) = Sq(*fit.R20_u);
    }
    b.r_at_20C = true;
  }
  for (const fit::RunFit& r : fit.runs) {
    if (std::isfinite(r.nominal_voltage) &&
        (!std::isfinite(b.typical_voltage) || r.nominal_voltage > b.typical_voltage)) {
      b.typical_voltage = r.nominal_voltage;
    }
  }
  return b;
}

Result<Baseline> BaselineFromNameplate(const Nameplate& n) {
  if (!(n.R > 0) || !(n.Ke > 0)) {
    return Status::InvalidArgument("nameplate: resistance and Kv must both be given and > 0");
  }
  if (!(n.no_load_current >= 0) || !(n.relative_tolerance > 0)) {
    return Status::InvalidArgument(
        "nameplate: no-load current must be ≥ 0 and the tolerance > 0");
  }
  Baseline b;
  b.source = "nameplate";
  model::MotorParams& p = b.estimate.value;
  p.R = n.R;
  p.Ke = n.Ke;
  p.Tc = n.Ke * n.no_load_current;
  b.typical_voltage = n.voltage;
  const double t = n.relative_tolerance;
  b.estimate.cov(model::kR, model::kR) = Sq(t * p.R);
  b.estimate.cov(model::kKe, model::kKe) = Sq(t * p.Ke);
  if (p.Tc > 0) b.estimate.cov(model::kTc, model::kTc) = Sq(t * p.Tc);
  return b;
}

const char* FillVerdictName(FillVerdict v) {
  switch (v) {
    case FillVerdict::kFits: return "fits";
    case FillVerdict::kTight: return "tight";
    case FillVerdict::kWillNotFit: return "will not fit";
  }
  return "fits";
}

FillCheck CheckFill(const model::Winding& old_w, const model::Winding& new_w,
                    const model::ArmatureDims& dims) {
  FillCheck f;
  f.old_footprint = old_w.FootprintArea();
  f.new_footprint = new_w.FootprintArea();
  f.ratio = f.new_footprint / f.old_footprint;
  f.ratio_max_od =
      new_w.turns * new_w.strands * Sq(new_w.wire.od_max) / f.old_footprint;
  f.old_copper = old_w.CopperArea();
  f.new_copper = new_w.CopperArea();
  auto by_ratio = [](double r) {
    return r <= kFootprintFits    ? FillVerdict::kFits
           : r <= kFootprintTight ? FillVerdict::kTight
                                  : FillVerdict::kWillNotFit;
  };
  f.verdict = by_ratio(f.ratio);
  f.reason = fmt::format(
      "the new winding needs {:.0f} % of the space the old one took (≤ {:.0f} % fits, "
      "≤ {:.0f} % tight)",
      100 * f.ratio, 100 * kFootprintFits, 100 * kFootprintTight);
  if (dims.HasSlotArea()) {
    // Each slot of a ring armature holds one side of each of two coils.
    const double half_slot = 0.5 * dims.slot_area;
    f.old_copper_fill = f.old_copper / half_slot;
    f.new_copper_fill = f.new_copper / half_slot;
    const double k = *f.new_copper_fill;
    const FillVerdict by_fill = k <= kCopperFillFits    ? FillVerdict::kFits
                                : k <= kCopperFillTight ? FillVerdict::kTight
                                                        : FillVerdict::kWillNotFit;
    f.verdict = std::max(f.verdict, by_fill);
    f.reason += fmt::format(
        "; copper fills {:.0f} % of its half slot (old {:.0f} %; ≤ {:.0f} % fits by hand, "
        "≤ {:.0f} % tight)",
        100 * k, 100 * *f.old_copper_fill, 100 * kCopperFillFits, 100 * kCopperFillTight);
  }
  return f;
}

Result<Prediction> PredictRewind(const Baseline& baseline, const model::Winding& old_w,
                                 const model::Winding& new_w, const PlanOptions& options) {
  if (old_w.coils != new_w.coils) {
    return Status::InvalidArgument(fmt::format(
        "the old winding has {} coils and the new one {}; a rewind keeps the armature's slots",
        old_w.coils, new_w.coils));
  }
  if (old_w.turns < 1 || new_w.turns < 1) {
    return Status::InvalidArgument("both windings need at least one turn per coil");
  }
  const model::MotorParams& b = baseline.estimate.value;
  if (!(b.R > 0) || !(b.Ke > 0)) {
    return Status::FailedPrecondition("the baseline has no positive R and Ke to scale from");
  }
  if (!(options.voltage > 0)) {
    return Status::InvalidArgument("a supply voltage > 0 is needed for the characteristics");
  }

  Prediction p;
  p.baseline = baseline;
  p.old_winding = old_w;
  p.new_winding = new_w;
  p.options = options;
  p.fill = CheckFill(old_w, new_w, options.dims);

  p.turns_ratio = static_cast<double>(new_w.turns) / old_w.turns;
  p.area_ratio = (new_w.strands * new_w.wire.Area()) / (old_w.strands * old_w.wire.Area());
  // Mean turn: the build depth grows with the coil's footprint (same width in the slot).
  double mlt_u = 0;
  const model::ArmatureDims& d = options.dims;
  if (d.HasMeanTurn()) {
    const double mlt_old = model::MeanTurnLength(d.stack_length, d.tooth_width, d.build_depth);
    const double mlt_new =
        model::MeanTurnLength(d.stack_length, d.tooth_width, d.build_depth * p.fill.ratio);
    p.mlt_ratio = mlt_new / mlt_old;
    // How well "build ∝ footprint" holds: a quarter of the change, rectangular.
    mlt_u = 0.25 * std::fabs(p.mlt_ratio - 1) / std::sqrt(3.0);
    const double r_old = model::BrushToBrushResistance(
        old_w.coils, old_w.CoilResistance20(mlt_old), options.brush_fraction);
    const double r_new = model::BrushToBrushResistance(
        new_w.coils, new_w.CoilResistance20(mlt_new), options.brush_fraction);
    p.r_geometry_old = r_old;
    p.r_geometry_new = r_new;
    const double agree = b.R / r_old;
    if (agree < 0.8 || agree > 1.25) {
      p.notes.push_back(fmt::format(
          "the measured resistance is {:.2f} × what the dimensions and the old winding give; "
          "check the turn count, the wire and the dimensions (a poor joint also raises it)",
          agree));
    }
  } else {
    // Without dimensions the MLT is taken as unchanged; its build-depth part changes with
    // the footprint, which we count as an uncertainty (rectangular over that change).
    p.mlt_ratio = 1.0;
    mlt_u = options.build_fraction_of_mlt * std::fabs(p.fill.ratio - 1) / std::sqrt(3.0);
  }

  const double k_r = p.turns_ratio * p.mlt_ratio / p.area_ratio;
  const double k_ke = p.turns_ratio;
  Eigen::Matrix<double, kNumParams, 1> scale = Eigen::Matrix<double, kNumParams, 1>::Ones();
  scale(model::kR) = k_r;
  scale(model::kKe) = k_ke;
  scale(model::kL) = k_ke * k_ke;
  model::MotorEstimate& e = p.predicted;
  e.value = b;
  for (int i = 0; i < kNumParams; ++i) model::Set(&e.value, i, model::Get(b, i) * scale(i));
  e.cov = scale.asDiagonal() * baseline.estimate.cov * scale.asDiagonal();

  // Winding tolerances, relative, 1σ.
  const double un = Sq(options.turn_count_u / new_w.turns) + Sq(options.turn_count_u / old_w.turns);
  const double ua = Sq(new_w.wire.AreaRelativeU()) + Sq(old_w.wire.AreaRelativeU());
  const double r = e.value.R, ke = e.value.Ke;
  e.cov(model::kR, model::kR) += r * r * (un + ua + Sq(mlt_u) + Sq(options.r_model_u));
  e.cov(model::kKe, model::kKe) += ke * ke * (un + Sq(options.ke_model_u));
  e.cov(model::kR, model::kKe) += r * ke * un;
  e.cov(model::kKe, model::kR) += r * ke * un;
  if (e.cov(model::kL, model::kL) > 0) {
    e.cov(model::kL, model::kL) += Sq(e.value.L) * 4 * un;
  }

  p.baseline_char = model::ComputeCharacteristicsU(baseline.estimate, options.voltage);
  p.predicted_char = model::ComputeCharacteristicsU(e, options.voltage);

  if (!baseline.r_at_20C) {
    p.notes.push_back(
        "the baseline resistance was not normalised to 20 °C; predicted R is at the same "
        "temperature as the baseline measurement");
  }
  if (new_w.wire.od_source != model::DiameterSource::kTable ||
      old_w.wire.od_source != model::DiameterSource::kTable) {
    p.notes.push_back(fmt::format(
        "enamelled diameters: old {} {} ({}), new {} {} ({})", old_w.wire.Name(),
        model::InsulationName(old_w.wire.insulation),
        model::DiameterSourceName(old_w.wire.od_source), new_w.wire.Name(),
        model::InsulationName(new_w.wire.insulation),
        model::DiameterSourceName(new_w.wire.od_source)));
  }
  if (baseline.estimate.value.J <= 0) {
    p.notes.push_back("inertia unknown: the mechanical time constant is not predicted");
  }
  return p;
}

}  // namespace rb::rewind
