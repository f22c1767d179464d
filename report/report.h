// rotorbench report: what the fitted model tells, as one self-contained HTML file.
//
// CollectReportInput gathers a motor's record, its runs (calibrated samples), the chosen
// fits and the primary fit's predictions from the database; BuildReport turns that into
// one HTML file: the constants in trade units with ± uncertainty and the identifiability
// warnings in words, the characteristic curves at one supply voltage with operating points
// and uncertainty bands (several fits overlaid), and measured vs fitted speed and current
// of every run with a residual strip. Plots come from report/svg_plot.h (also public, for
// other reports); pages from report/html.h; numbers from report/quantity.h. SI inside;
// trade units appear only in the output. Thread-safety: BuildReport is pure; Collect uses
// the caller's Database.
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "base/status.h"
#include "fit/fit.h"
#include "model/characteristics.h"
#include "report/html.h"
#include "report/quantity.h"
#include "report/svg_plot.h"
#include "report/ticks.h"
#include "storage/storage.h"

namespace rb::report {

/// One fit as the report shows it.
struct ReportFit {
  std::int64_t id = 0;      ///< fit id in the database (0 = not stored)
  std::string created_utc;  ///< when it was made
  fit::FitSummary summary;
};

/// One run with what is plotted of it.
struct ReportRun {
  storage::Run record;
  std::vector<model::Sample> samples;            ///< calibrated readings, SI
  std::vector<storage::RunEvent> events;         ///< output on/off, limit trips, gaps
  std::optional<fit::RunPrediction> prediction;  ///< the primary fit's model at those times
  std::string no_prediction_reason;              ///< why there is none, in words
  bool in_primary_fit = false;                   ///< the primary fit used this run
};

/// Everything a report shows, already loaded (BuildReport does no I/O).
struct ReportInput {
  storage::Motor motor;
  std::vector<ReportRun> runs;
  std::vector<ReportFit> fits;  ///< fits[0] is the primary fit; the others are overlaid
  double voltage = 0;           ///< supply voltage for the characteristics [V]
  std::string voltage_origin;   ///< how the voltage was chosen, in words
  std::string database;         ///< the database file, as shown in the header
  std::string generated_utc;    ///< when the report was made (ISO 8601 UTC)
  std::string software_version;
};

struct ReportOptions {
  int curve_points = 81;  ///< points per characteristic curve (≥ 2)
};

struct ReportSummary {
  std::string html;                     ///< the complete document
  std::vector<std::string> figure_ids;  ///< id of every <svg class="plot">, in page order
  std::vector<std::string> notes;       ///< what the reader should know (missing predictions)
};

/// Builds the report. Fails (InvalidArgument) without a fit or with a voltage ≤ 0.
Result<ReportSummary> BuildReport(const ReportInput& in, const ReportOptions& options = {});

// ---- Gathering the input from the database
struct CollectOptions {
  std::string motor;                  ///< motor label
  std::vector<std::int64_t> fit_ids;  ///< first = primary; empty = the newest fit, with up to
                                      ///< kMaxOverlaidFits − 1 older ones overlaid
  std::optional<double> voltage;      ///< [V]; default: the highest supply setting of the
                                      ///< primary fit's runs
};
inline constexpr int kMaxOverlaidFits = 6;

/// The model's trajectories for a run (fit::PredictRun, or a stand-in in tests).
using Predictor =
    std::function<Result<fit::RunPrediction>(const fit::FitSummary&, const fit::RunData&)>;

/// Loads the motor, its runs (calibration applied), the fits and predictions. A prediction
/// that fails is noted in the run (no_prediction_reason), not an error.
Result<ReportInput> CollectReportInput(storage::Database& db, const CollectOptions& options,
                                       const Predictor& predict);

// ---- Pieces, for other reports and the terminal
/// One characteristic figure as tables show it (the report and `rotorbench curves` alike).
struct FigureRow {
  model::CharacteristicIndex index;
  const char* label;     ///< "no-load speed", "… at speed"
  const char* json_key;  ///< SI name for JSON, e.g. "no_load_speed_rad_s"
  DisplayUnit unit;      ///< how it is displayed
  bool sub;              ///< a detail row under a maximum
};
const std::vector<FigureRow>& CharacteristicRows();

/// The characteristic curves at `voltage` for each fit (speed, current, output power and
/// efficiency against output torque), with ±2u bands and the operating points marked.
std::vector<Figure> CurveFigures(const std::vector<ReportFit>& fits, double voltage, int points);

/// Measured vs fitted speed, current (and voltage where logged) over time, each with a
/// residual strip; `fit_run` supplies the noise levels when the fit used the run.
Figure RunFigure(const ReportRun& run, const fit::RunFit* fit_run, const std::string& id);

}  // namespace rb::report
