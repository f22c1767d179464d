// rotorbench rewind: plan a new armature winding, check that it fits, predict the
// rewound motor (free and on its real fan-law load), and verify the result afterwards.
//
// Prediction (docs/design.md §rewind): from a baseline parameter set — a stored fit, or
// nameplate values — and the old and new winding (model/winding.h), with the same
// magnets, stack and connection: Ke ∝ turns per coil; R ∝ turns × mean turn length /
// (strands × wire area); L ∝ turns²; J, Tc, b, Vb unchanged (domain.md §3.1). The
// baseline covariance is carried through, and so are the winding tolerances: bare wire
// diameter (NEMA / IEC limits), turn count (a hand count is good to ±1 turn), the mean
// turn length when the build changes, and a small scaling-model term.
// Slot fill: the new winding's insulated footprint against the old one's (and a copper
// fill factor when the slot area is given), verdict fits / tight / will not fit.
// Loaded point: fan-law load T = c·ω² estimated from a loaded run with the motor's
// constants known; the rewound motor's operating speed, current and power on that load.
// Verification: a fit of the rewound motor against the prediction, parameter by
// parameter with the combined uncertainty, and hints for a mismatch (turn count, a coil
// open or reversed in a 3-coil armature, a poor joint, wrong wire) from the ring-armature
// circuit (model/winding_faults.h).
// SI units throughout; trade units only in cli/. Pure functions except LoadPlan/StorePlan
// (a Database used by one thread). Thread-safe otherwise.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json_fwd.hpp>

#include "base/status.h"
#include "fit/fit.h"
#include "model/characteristics.h"
#include "model/params.h"
#include "model/sample.h"
#include "model/winding.h"

namespace rb::storage {
class Database;
}

namespace rb::rewind {

// ---- Baseline ------------------------------------------------------------------------

/// The motor as it is now, before the rewind.
struct Baseline {
  std::string source;                ///< "fit 12" or "nameplate"
  std::optional<std::int64_t> fit_id;
  std::string motor;                 ///< motor label, if known
  model::MotorEstimate estimate;     ///< R at 20 °C when the fit gave it
  bool r_at_20C = false;             ///< estimate.value.R is the 20 °C value
  double typical_voltage = NAN;      ///< highest nominal voltage of the fitted runs [V]
};

/// The fit's values and combined covariance; R replaced by its 20 °C value if known.
Baseline BaselineFromFit(const fit::FitSummary& fit, std::optional<std::int64_t> fit_id);

/// Catalogue or nameplate data. Tc is taken from the no-load current (Tc = Kt·I0, b = 0);
/// J is unknown (0) and Vb = 0.
struct Nameplate {
  double R = NAN;                ///< terminal resistance [Ω]
  double Ke = NAN;               ///< [V·s/rad]
  double no_load_current = 0;    ///< [A]
  double voltage = NAN;          ///< rated voltage [V]
  double relative_tolerance = 0.10;  ///< standard uncertainty of each value, relative
};
Result<Baseline> BaselineFromNameplate(const Nameplate& n);

// ---- Slot fill -----------------------------------------------------------------------

enum class FillVerdict { kFits, kTight, kWillNotFit };
const char* FillVerdictName(FillVerdict v);  // "fits", "tight", "will not fit"

/// Thresholds. Footprint ratio new/old: ≤ 1.00 fits (no more room needed than the old
/// winding took), ≤ 1.10 tight, above will not fit — the 10 % is our judgement of what a
/// careful hand winding gains over a factory one (no source). Copper fill of a coil's
/// half slot: ≤ 0.40 fits (hand-wound small armatures 0.25–0.40, from memory), ≤ 0.50
/// tight (random winding reaches 45–50 %, mycoil.info glossary), above will not fit by
/// hand (domain.md §3.2).
inline constexpr double kFootprintFits = 1.00;
inline constexpr double kFootprintTight = 1.10;
inline constexpr double kCopperFillFits = 0.40;
inline constexpr double kCopperFillTight = 0.50;

struct FillCheck {
  double old_footprint = 0;   ///< per coil side, insulated wires as squares [m²]
  double new_footprint = 0;
  double ratio = 0;           ///< new/old at nominal overall diameters
  double ratio_max_od = 0;    ///< new at its maximum overall diameter / old nominal
  double old_copper = 0, new_copper = 0;  ///< copper cross-section per coil side [m²]
  std::optional<double> old_copper_fill, new_copper_fill;  ///< of half a slot
  FillVerdict verdict = FillVerdict::kFits;
  std::string reason;         ///< the numbers behind the verdict, one line
};

FillCheck CheckFill(const model::Winding& old_w, const model::Winding& new_w,
                    const model::ArmatureDims& dims);

// ---- Prediction ----------------------------------------------------------------------

struct PlanOptions {
  double voltage = NAN;             ///< supply for the characteristics [V]
  model::ArmatureDims dims;         ///< optional geometry
  double brush_fraction = 0.2;      ///< brush width / segment pitch (for R from geometry)
  /// Standard uncertainty of a turn count: ±1 turn as a rectangular limit → 1/√3.
  double turn_count_u = 0.5773502691896258;
  /// Scaling-model terms (relative, 1σ): end turns and leads differ between hand
  /// windings; our judgement, no source.
  double r_model_u = 0.02;
  double ke_model_u = 0.01;
  /// Without dimensions the build depth term of the mean turn is taken as this fraction
  /// of the MLT (domain.md §3.2 check values: π·3 mm of 57.42 mm ≈ 0.16).
  double build_fraction_of_mlt = 0.16;
};

struct Prediction {
  Baseline baseline;
  model::Winding old_winding, new_winding;
  PlanOptions options;
  double turns_ratio = 1;        ///< N_new/N_old
  double area_ratio = 1;         ///< copper per turn, new/old
  double mlt_ratio = 1;          ///< mean turn length, new/old (1 without dimensions)
  model::MotorEstimate predicted;
  model::CharacteristicsU baseline_char, predicted_char;  ///< at options.voltage
  FillCheck fill;
  /// Brush-to-brush R at 20 °C from first principles (dimensions given) [Ω].
  std::optional<double> r_geometry_old, r_geometry_new;
  std::vector<std::string> notes;  ///< assumptions worth reading
};

Result<Prediction> PredictRewind(const Baseline& baseline, const model::Winding& old_w,
                                 const model::Winding& new_w, const PlanOptions& options);

// ---- Fan-law load --------------------------------------------------------------------

struct FanLoadOptions {
  double window_fraction = 0.4;  ///< use the last 40 % of the run (after the step)
  double max_drift = 0.02;       ///< refuse if the speed drifts more than this across it
};

struct FanLoadEstimate {
  double c = 0;             ///< T = c·ω² [N·m·s²/rad²]
  double c_u = 0;           ///< standard uncertainty from the motor constants and noise
  double c_u_noise = 0;     ///< the part of c_u from the noise of the window means
  double c_from_current = NAN;  ///< the same from the measured current (cross-check)
  double speed = 0;         ///< mean speed in the window [rad/s]
  double current = NAN;     ///< mean measured current [A]
  double v_terminal = 0;    ///< mean terminal voltage [V]
  double v_source = 0;      ///< supply setting used for predictions [V]
  double r_source = 0;      ///< supply + lead resistance inferred from the sag [Ω]
  double t_from = 0, t_to = 0;  ///< the window [s]
  std::size_t n_speed = 0, n_voltage = 0;
};

/// Estimates c from a loaded run's steady tail with the motor's constants known.
/// `nominal_voltage` (the supply setting) lets the supply resistance be inferred.
Result<FanLoadEstimate> EstimateFanLoad(const model::MotorEstimate& motor,
                                        const std::vector<model::Sample>& samples,
                                        std::optional<double> nominal_voltage,
                                        const FanLoadOptions& options = {});

/// Steady operating point on a fan load from a source v_source behind r_source.
struct LoadedPoint {
  double speed = 0, current = 0, torque = 0, power_out = 0, power_in = 0;
  double efficiency = 0, v_terminal = 0;
};
LoadedPoint FanOperatingPoint(const model::MotorParams& p, double c, double v_source,
                              double r_source);

struct LoadedPrediction {
  LoadedPoint baseline;   ///< the old motor on the load (model; compare with the run)
  LoadedPoint predicted;  ///< the rewound motor on the same load and supply
  double speed_u = 0, current_u = 0, power_u = 0;  ///< standard uncertainties
};
LoadedPrediction PredictLoaded(const Prediction& prediction, const FanLoadEstimate& load);

// ---- Suggestions ---------------------------------------------------------------------

struct SuggestTarget {
  enum class Kind { kKe, kNoLoadSpeed } kind = Kind::kKe;
  double value = NAN;    ///< Ke [V·s/rad], or no-load speed [rad/s] at `voltage`
  double voltage = NAN;  ///< [V] for the speed target, the current limit and the table
  std::optional<double> max_stall_current;  ///< [A] at `voltage`
};

struct SuggestOptions {
  model::CatalogueOptions catalogue;
  int max_strands = 2;
  double tolerance = 0.05;  ///< accepted relative miss of the target
  int limit = 10;
  PlanOptions plan;         ///< dims, tolerances (voltage comes from the target)
};

struct Suggestion {
  Prediction prediction;
  double achieved = 0;  ///< Ke or no-load speed reached (SI, like the target)
  double error = 0;     ///< (achieved − target)/target
};

/// Turn counts and wires that meet the target within the tolerance and fit the slots,
/// ranked: fits before tight, then closest to the target, then lowest resistance.
Result<std::vector<Suggestion>> SuggestWindings(const Baseline& baseline,
                                                const model::Winding& old_w,
                                                const SuggestTarget& target,
                                                const SuggestOptions& options);

// ---- Plans (stored) ------------------------------------------------------------------

struct Plan {
  std::int64_t id = 0;  ///< 0 until stored
  Prediction prediction;
  std::optional<FanLoadEstimate> load;
  std::optional<std::int64_t> load_run_id;
  std::optional<LoadedPrediction> loaded;
};

/// {"baseline": {NAME: value}, "predicted": {NAME: value}, "fill": {...}, ...} with
/// NAME as in the fitter's JSON (R_ohm, Ke_V_s_per_rad, Kt_N_m_per_A, Kv_rpm_per_V, ...),
/// SI values (Kv in rpm/V); also uncertainties, covariances, windings, characteristics.
nlohmann::json PlanToJson(const Plan& plan);
/// Rebuilds a plan from its JSON (recomputing the derived figures).
Result<Plan> PlanFromJson(const nlohmann::json& j);

Result<std::int64_t> StorePlan(storage::Database& db, const Plan& plan,
                               std::optional<std::int64_t> motor_id);
Result<Plan> LoadPlan(storage::Database& db, std::int64_t plan_id);

/// What the report overlays on the rewound motor's measured curves: the baseline and
/// predicted parameter sets and their characteristic curves at the plan's voltage, each
/// point with its delta-method band (model::CharacteristicCurvesU, n points from no load
/// to stall).
struct PlanCurves {
  double voltage = 0;
  model::MotorEstimate baseline, predicted;
  model::CurvesU baseline_curves, predicted_curves;
};
PlanCurves CurvesForReport(const Plan& plan, int n = 101);

// ---- Verification --------------------------------------------------------------------

struct VerifyOptions {
  double match_z = 2.0;     ///< |z| ≤ this: matches (≈95 % coverage, GUM k = 2)
  double mismatch_z = 3.0;  ///< |z| > this: does not match; in between: marginal
};

struct ParamCheck {
  std::string name;         ///< JSON name, e.g. "R_ohm"
  double predicted = 0, predicted_u = 0, measured = 0, measured_u = 0;
  double z = 0;             ///< (measured − predicted)/√(u_p² + u_m²)
  std::string verdict;      ///< "matches", "marginal", "does not match", "not compared"
  bool decides = false;     ///< part of the overall verdict (the winding's parameters)
};

struct Hint {
  std::string cause;   ///< "turn count off", "one coil open", ...
  std::string detail;  ///< numbers in plain words
  double distance = 0; ///< how well the signature fits (smaller is better; ≤ 2 plausible)
};

struct Verification {
  std::string verdict;  ///< "matches", "marginal", "does not match"
  std::vector<ParamCheck> params;
  std::vector<ParamCheck> figures;  ///< no-load speed, stall current ... at the plan voltage
  std::vector<Hint> hints;          ///< most likely first; empty when it matches
  std::optional<ParamCheck> loaded_speed;  ///< measured loaded run vs prediction
};

/// Compares a fit of the rewound motor with the plan. `loaded_run` (a fan-load run of
/// the rewound motor on the plan's load) adds the loaded-speed check when the plan has
/// a load.
Verification VerifyRewind(const Plan& plan, const fit::FitSummary& after,
                          const std::vector<model::Sample>* loaded_run = nullptr,
                          const VerifyOptions& options = {});

/// The fault signatures of a ring armature, for the hints and the docs: ratios of R and
/// Ke faulty/healthy and the extra drag, averaged over brush widths 0–0.3 of a pitch.
struct FaultHypothesis {
  std::string cause;
  double r_ratio = 1, r_ratio_u = 0;
  double ke_ratio = 1, ke_ratio_u = 0;
  double drag = 0;  ///< extra viscous drag in units of Ke²/R of the healthy motor
};
std::vector<FaultHypothesis> RingFaultHypotheses(int coils);

/// The usual cautions for stripping, soldering and testing a rewound motor.
const char* SafetyNote();

}  // namespace rb::rewind
