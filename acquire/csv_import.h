// rotorbench acquire: samples from and to CSV files.
//
// Import reads one run per file. The default header is time_s,speed_rpm,current_a,
// voltage_v (any subset but time); headers with other unit suffixes are recognised
// (time_ms, speed_rad_s, current_ma, voltage_mv, ...), and options map any other header
// and unit. Empty cells mean "no reading". Every error names file:line and what was
// expected. Values become SI here; nothing else in the program parses CSV.
// Thread-safe (no shared state).
#pragma once

#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "model/sample.h"

namespace rb::acquire {

/// Which header holds a channel and in which unit. Empty strings mean "use the default".
struct ColumnSpec {
  std::string header;  ///< exact header text (case-insensitive match)
  std::string unit;    ///< a unit accepted by model/units.h, e.g. "ms", "rad/s", "mA"
};

struct CsvImportOptions {
  ColumnSpec time, speed, current, voltage;
  char delimiter = ',';
};

/// Where each channel came from (for messages and run metadata).
struct ColumnUse {
  std::string header;  ///< empty when the file has no such column
  std::string unit;
};

struct CsvImportSummary {
  std::vector<model::Sample> samples;  ///< SI, strictly increasing time
  ColumnUse time, speed, current, voltage;
  size_t data_lines = 0;  ///< rows read (blank lines not counted)
  size_t speed_readings = 0, current_readings = 0, voltage_readings = 0;
};

/// Checks the unit names in `options` before any file is read; the message names the
/// option (e.g. "--current-unit uA: unknown current unit; expected A, mA").
Status ValidateCsvOptions(const CsvImportOptions& options);

/// Parses CSV text. `file_name` is used only in error messages.
Result<CsvImportSummary> ParseSamplesCsv(std::string_view text, std::string_view file_name,
                                         const CsvImportOptions& options);

/// Reads and parses a file.
Result<CsvImportSummary> ReadSamplesCsv(const std::string& path, const CsvImportOptions& options);

/// The export form: header time_s,speed_rpm,current_a,voltage_v, empty cells for missing
/// readings, time to 15 and values to 12 significant digits (enough to reproduce any
/// instrument reading).
std::string SamplesToCsv(std::span<const model::Sample> samples);

}  // namespace rb::acquire
