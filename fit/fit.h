// rotorbench fit: one parameter set per motor from its logged runs.
//
// Joint nonlinear least squares (Ceres Solver) over spin-up, coast-down, locked-rotor and
// steady runs: the model ODE (model/dynamics.h) is integrated, driven by the measured
// terminal voltage where logged, and compared with the measurements at their own time
// stamps. Reports statistical standard errors, a GUM-style combined uncertainty that
// includes the instruments' calibration, and identifiability diagnostics in words.
// Consumers (report, rewind, qa) use FitSummary and its JSON form; they never see Ceres.
// SI units throughout. Thread-safety: FitRuns/FitMotor are reentrant (no shared state).
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <nlohmann/json_fwd.hpp>

#include "base/status.h"
#include "model/calibration.h"
#include "model/characteristics.h"
#include "model/params.h"
#include "model/sample.h"

namespace rb::storage {
class Database;
}

namespace rb::fit {

/// Optional terms of the model, named by what they add to the basic model
/// (R, Ke = Kt, J, Tc, b). Names: "basic", "basic+brush", "basic+inductance",
/// "basic+brush+inductance" (+"heating" where used).
struct ModelSpec {
  bool brush_drop = false;  ///< fit Vb (identifiable with ≥ 2 voltage levels)
  bool inductance = false;  ///< fit L (current sampled fast against L/R)
  bool heating = false;     ///< winding-heating term for long or hard runs

  std::string Name() const;
  /// Parses a name as above; the error lists the accepted names.
  static Result<ModelSpec> Parse(std::string_view name);
  bool operator==(const ModelSpec&) const = default;
};

/// What to fit and how. Defaults suit a bench user: no guesses needed.
struct FitOptions {
  /// Model terms; nullopt = choose what the data supports (and say so in diagnostics).
  std::optional<ModelSpec> model;
  /// Runs to use; empty = every complete or interrupted run of the motor.
  std::vector<std::int64_t> run_ids;
  /// Winding temperature for the 20 °C correction of R; NaN = the runs' ambient, if any.
  double winding_temperature_C = NAN;
  /// Standard uncertainty of that temperature [K] (an ambient thermometer: 1 K).
  double temperature_u_K = 1.0;
  /// Start values instead of the closed-form estimates (tests and experts); nullopt = from
  /// the data. A bad start costs iterations, not the answer.
  std::optional<model::MotorParams> start;
  /// Average dense current/voltage samples in short bins before fitting (much faster; see
  /// docs/design.md, "fit — the motor fitter" for why this loses nothing the model can use).
  bool average_dense_samples = true;
  /// Solver threads; 0 = up to 2.
  int threads = 0;
};

/// One parameter of the result (SI).
struct ParamResult {
  bool fitted = false;     ///< false: held fixed (e.g. L = 0), no uncertainty
  double value = 0;
  double stderr_stat = 0;  ///< statistical standard error, s²(JᵀJ)⁻¹ at the solution
  double u_combined = 0;   ///< combined standard uncertainty incl. instruments (GUM)
  /// false: the runs cannot determine this parameter (value NaN, not fitted; a diagnostic
  /// says why and which run would fix it). A parameter held fixed by the model choice
  /// (e.g. L = 0) stays "identified" with fitted = false.
  bool identified = true;
};

/// One line of an uncertainty budget: the standard uncertainty a source contributes.
struct BudgetLine {
  int param = 0;       ///< model::ParamIndex
  std::string source;  ///< "fit (statistical)", "current sensor gain", "timer", ...
  double u = 0;        ///< SI, 1σ
};

struct Diagnostic {
  enum class Severity { kInfo, kWarning, kError };
  Severity severity = Severity::kInfo;
  std::string param;       ///< JSON name of the parameter concerned; empty = the whole fit
  std::string message;     ///< plain words: what the data cannot support, and why
  std::string suggestion;  ///< which run would fix it (add a coast-down, ...)
};

/// Residual statistics of one measured channel of one run.
struct ChannelFit {
  std::string channel;  ///< "speed", "current", "voltage"
  std::size_t n = 0;    ///< readings used
  double rms = 0;       ///< RMS residual [SI]
  double sigma = 0;     ///< noise level used to weight the channel [SI]
  std::size_t outliers = 0;  ///< readings down-weighted by the robust loss
};

struct RunFit {
  std::int64_t run_id = 0;
  model::RunKind kind = model::RunKind::kSpinUp;
  double nominal_voltage = 0;
  /// Per-run nuisance parameters by name ("t_offset_s", "w0_rad_s", ...).
  std::vector<std::pair<std::string, double>> nuisance;
  std::vector<ChannelFit> channels;
};

struct FitSummary {
  std::string motor;
  ModelSpec model;
  std::array<ParamResult, model::kNumParams> params{};  ///< in model::ParamIndex order
  model::ParamCovariance covariance = model::ParamCovariance::Zero();       ///< combined
  model::ParamCovariance covariance_stat = model::ParamCovariance::Zero();  ///< statistical
  std::vector<BudgetLine> budget;
  std::optional<double> temperature_C;  ///< winding temperature used for R20
  std::optional<double> R20, R20_u;     ///< R corrected to 20 °C (IEC 60028 α20) [Ω]
  std::vector<Diagnostic> diagnostics;
  std::vector<RunFit> runs;
  /// Further estimates outside the seven motor constants, by name (SI), e.g.
  /// "winding_heat_capacity_J_per_K" with the heating model.
  std::vector<std::pair<std::string, ParamResult>> extra;
  int iterations = -1;
  double final_cost = -1;
  std::string termination = "not run";
  double solve_seconds = 0;
  std::string software_version;

  model::MotorParams Params() const;
  /// Values with the combined covariance, for propagation (model/characteristics.h).
  model::MotorEstimate Estimate() const;
  /// Correlation matrix of the fitted parameters (statistical covariance).
  model::ParamCovariance Correlation() const;
};

/// The stored and printed JSON form (`rotorbench fit --json`):
/// {"motor": LABEL, "model": NAME, "parameters": {NAME: {"value", "stderr", "u_combined",
///  "fitted"}}, "covariance": {...}, "diagnostics": [...], "runs": [...], ...}
/// with NAME among R_ohm, Ke_V_s_per_rad, Kt_N_m_per_A, Kv_rpm_per_V, J_kg_m2, Tc_N_m,
/// b_N_m_s_per_rad, L_H, Vb_V (SI values; Kv in rpm/V).
nlohmann::json ToJson(const FitSummary& s);
Result<FitSummary> FitSummaryFromJson(const nlohmann::json& j);
Result<FitSummary> FitSummaryFromJsonText(std::string_view text);

/// One run's data as the fitter sees it (calibration already applied).
struct RunData {
  std::int64_t id = 0;
  model::RunKind kind = model::RunKind::kSpinUp;
  std::optional<double> nominal_voltage;
  std::optional<double> ambient_C;
  std::vector<model::Sample> samples;
  /// The calibration that was applied to the samples; its uncertainties (gain, offset)
  /// enter the uncertainty budget. nullopt = none declared.
  std::optional<model::Calibration> calibration;
  /// Tach marks per revolution; 0 = unknown (the pitch is inferred from the readings).
  int marks_per_rev = 0;
  /// Output switch events logged by the rig [s since run start]; empty = found in the data.
  std::vector<double> output_on_s, output_off_s;
};

/// Fits one parameter set to the given runs (all of one motor).
Result<FitSummary> FitRuns(const std::vector<RunData>& runs, const FitOptions& options);

/// Loads the motor's runs from the database, fits them, and returns the summary
/// (does not store it; see StoreFit).
Result<FitSummary> FitMotor(storage::Database& db, const std::string& motor_label,
                            const FitOptions& options);

/// Stores a summary as a fit of the motor; returns the fit id.
Result<std::int64_t> StoreFit(storage::Database& db, const FitSummary& s);

/// Loads a stored fit.
Result<FitSummary> LoadFit(storage::Database& db, std::int64_t fit_id);

/// Sets up the solver library's logging once per process: messages to stderr only (no log
/// files), errors only. Call early in main(); safe to call again.
void InitLogging(const char* argv0);

/// The fitted model's trajectories at a run's own sample times, for plots and residual
/// strips. NaN where the model does not predict a channel.
struct RunPrediction {
  std::vector<double> t, speed, current, voltage;
};
Result<RunPrediction> PredictRun(const FitSummary& fit, const RunData& run);

}  // namespace rb::fit
