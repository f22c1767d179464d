// rotorbench acquire: plain-text instruments that print one reading per line.
//
// A small TOML map says which fields of a line hold which quantity in which unit (units
// from model/units.h), and optionally which lines to take (field N equals a tag):
//
//   name = "hand tach"
//   separators = " ,"         # default: spaces, tabs, commas, semicolons
//   latency_s = 0.0           # the instrument's delay, subtracted from arrival time
//   [match]                   # optional
//   field = 1
//   text = "T"
//   [[field]]
//   index = 2                 # 1-based
//   quantity = "speed"        # speed, current or voltage
//   unit = "rpm"
//
// Readings are stamped with the host time their line arrived; two instruments are
// merged on those times. Thread-safe (values only); LineSplitter is per port.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "model/sample.h"
#include "model/units.h"

namespace rb::acquire {

struct TextField {
  int index = 0;  ///< 1-based field number
  units::Quantity quantity = units::Quantity::kSpeed;
  double scale = 1.0;  ///< SI per unit
  std::string unit;
};

struct TextInstrumentMap {
  std::string name;
  std::string separators = " \t,;";
  double latency_s = 0;
  int match_field = 0;  ///< 0 = take every line
  std::string match_text;
  std::vector<TextField> fields;
};

Result<TextInstrumentMap> LoadTextInstrumentMap(const std::string& path);
Result<TextInstrumentMap> ParseTextInstrumentMap(const std::string& toml_text, const std::string& name);

/// One line → a sample at time t (channels not in the map stay NaN). nullopt: the line
/// is not one of ours (the match filter). An error names the field and what was expected.
Result<std::optional<model::Sample>> ParseTextLine(const TextInstrumentMap& map, std::string_view line,
                                                   double t);

/// Splits a byte stream into lines (LF, CR or CRLF); overlong lines are cut and counted.
class LineSplitter {
 public:
  void Feed(std::string_view bytes, std::vector<std::string>* lines);
  std::uint64_t overlong() const { return overlong_; }

 private:
  std::string partial_;
  bool skipping_ = false;
  std::uint64_t overlong_ = 0;
};

}  // namespace rb::acquire
