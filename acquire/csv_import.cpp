#include "acquire/csv_import.h"

#include <csv.h>
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <fstream>
#include <optional>
#include <sstream>

#include "base/text.h"
#include "model/units.h"

namespace rb::acquire {
namespace {

using units::Quantity;

struct Channel {
  const char* name;  // "time", "speed", ...
  Quantity q;
  const ColumnSpec* spec;
  const char* option;                         // "--time" prefix for messages
  std::array<std::pair<const char*, const char*>, 4> defaults;  // header → unit
};

std::string Lower(std::string_view s) {
  std::string out(s);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

std::string Trim(std::string_view s) {
  const auto b = s.find_first_not_of(" \t\r");
  if (b == std::string_view::npos) return "";
  const auto e = s.find_last_not_of(" \t\r");
  return std::string(s.substr(b, e - b + 1));
}

/// Collects the fields of one CSV record via libcsv's callbacks.
struct RecordSink {
  std::vector<std::string> fields;
  bool record_done = false;
};

void OnField(void* data, size_t len, void* sink) {
  auto* r = static_cast<RecordSink*>(sink);
  r->fields.emplace_back(data ? static_cast<const char*>(data) : "", data ? len : 0);
}

void OnRecord(int /*terminator*/, void* sink) { static_cast<RecordSink*>(sink)->record_done = true; }

/// Parses a decimal number; nullopt for text that is not entirely a number.
std::optional<double> ParseNumber(const std::string& s) {
  const char* b = s.data();
  const char* e = s.data() + s.size();
  if (b != e && *b == '+') ++b;
  double v = 0;
  auto [p, ec] = std::from_chars(b, e, v);
  if (ec != std::errc() || p != e) return std::nullopt;
  return v;
}

struct Resolved {
  int index = -1;  // column index in the header, -1 = absent
  std::string header;
  std::string unit;
  double scale = 1.0;
};

}  // namespace

Status ValidateCsvOptions(const CsvImportOptions& o) {
  const std::array<std::pair<const ColumnSpec*, Quantity>, 4> specs = {
      {{&o.time, Quantity::kTime},
       {&o.speed, Quantity::kSpeed},
       {&o.current, Quantity::kCurrent},
       {&o.voltage, Quantity::kVoltage}}};
  for (const auto& [spec, q] : specs) {
    if (!spec->unit.empty() && !units::FindUnit(q, spec->unit)) {
      return Status::InvalidArgument(fmt::format("--{}-unit {}: unknown {} unit; expected {}",
                                                 units::QuantityName(q), spec->unit,
                                                 units::QuantityName(q),
                                                 units::AcceptedUnits(q)));
    }
  }
  return Status::Ok();
}

Result<CsvImportSummary> ParseSamplesCsv(std::string_view text, std::string_view file_name,
                                         const CsvImportOptions& options) {
  RB_RETURN_IF_ERROR(ValidateCsvOptions(options));
  const std::string file(file_name);
  if (text.size() >= 3 && text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);  // BOM

  csv_parser parser;
  if (csv_init(&parser, CSV_STRICT | CSV_STRICT_FINI | CSV_APPEND_NULL) != 0) {
    return Status::IOError("cannot initialise the CSV parser");
  }
  csv_set_delim(&parser, static_cast<unsigned char>(options.delimiter));
  struct Cleanup {
    csv_parser* p;
    ~Cleanup() { csv_free(p); }
  } cleanup{&parser};

  const std::array<Channel, 4> channels = {{
      {"time", Quantity::kTime, &options.time, "--time",
       {{{"time_s", "s"}, {"time_ms", "ms"}, {"time_us", "us"}, {"t_s", "s"}}}},
      {"speed", Quantity::kSpeed, &options.speed, "--speed",
       {{{"speed_rpm", "rpm"}, {"speed_rad_s", "rad/s"}, {"speed_hz", "Hz"}, {"rpm", "rpm"}}}},
      {"current", Quantity::kCurrent, &options.current, "--current",
       {{{"current_a", "A"}, {"current_ma", "mA"}, {"i_a", "A"}, {"", ""}}}},
      {"voltage", Quantity::kVoltage, &options.voltage, "--voltage",
       {{{"voltage_v", "V"}, {"voltage_mv", "mV"}, {"v_v", "V"}, {"", ""}}}},
  }};

  CsvImportSummary out;
  std::array<Resolved, 4> cols;
  std::vector<std::string> header;
  size_t line_no = 0;
  bool have_header = false;
  double prev_t = -INFINITY;
  size_t prev_line = 0;

  auto handle_header = [&](const std::vector<std::string>& fields) -> Status {
    for (const std::string& f : fields) header.push_back(Trim(f));
    for (size_t a = 0; a < header.size(); ++a) {
      for (size_t b = a + 1; b < header.size(); ++b) {
        if (!header[a].empty() && Lower(header[a]) == Lower(header[b])) {
          return Status::InvalidArgument(fmt::format(
              "{}:{}: column '{}' appears twice; expected unique column names", file, line_no,
              Printable(header[a])));
        }
      }
    }
    auto find = [&](std::string_view name) -> int {
      for (size_t k = 0; k < header.size(); ++k) {
        if (Lower(header[k]) == Lower(name)) return static_cast<int>(k);
      }
      return -1;
    };
    std::string header_list;
    for (const std::string& h : header) header_list += (header_list.empty() ? "" : ", ") + h;
    header_list = Printable(header_list, 200);
    for (size_t c = 0; c < channels.size(); ++c) {
      const Channel& ch = channels[c];
      Resolved& r = cols[c];
      if (!ch.spec->header.empty()) {
        r.index = find(ch.spec->header);
        if (r.index < 0) {
          return Status::InvalidArgument(fmt::format(
              "{}:{}: no column '{}' (given by {}-col); the header has: {}", file, line_no,
              Printable(ch.spec->header), ch.option, header_list));
        }
        r.unit = ch.spec->unit.empty() ? units::SiUnitName(ch.q) : ch.spec->unit;
      } else {
        for (const auto& [name, unit] : ch.defaults) {
          if (*name && (r.index = find(name)) >= 0) {
            r.unit = ch.spec->unit.empty() ? unit : ch.spec->unit;
            break;
          }
        }
      }
      if (r.index >= 0) {
        r.header = header[static_cast<size_t>(r.index)];
        r.scale = units::FindUnit(ch.q, r.unit)->scale;
      }
    }
    if (cols[0].index < 0) {
      return Status::InvalidArgument(fmt::format(
          "{}:{}: no time column (looked for time_s, time_ms, time_us); expected one, or name "
          "it with --time-col; the header has: {}",
          file, line_no, header_list));
    }
    if (cols[1].index < 0 && cols[2].index < 0 && cols[3].index < 0) {
      return Status::InvalidArgument(fmt::format(
          "{}:{}: no speed, current or voltage column; expected at least one of speed_rpm, "
          "current_a, voltage_v (or name them with --speed-col, --current-col, --voltage-col); "
          "the header has: {}",
          file, line_no, header_list));
    }
    return Status::Ok();
  };

  auto handle_row = [&](const std::vector<std::string>& fields) -> Status {
    if (fields.size() != header.size()) {
      return Status::InvalidArgument(fmt::format("{}:{}: {} fields; expected {} as in the header",
                                                 file, line_no, fields.size(), header.size()));
    }
    std::array<double, 4> v{NAN, NAN, NAN, NAN};
    for (size_t c = 0; c < cols.size(); ++c) {
      if (cols[c].index < 0) continue;
      const std::string cell = Trim(fields[static_cast<size_t>(cols[c].index)]);
      if (cell.empty()) {
        if (c == 0) {
          return Status::InvalidArgument(fmt::format(
              "{}:{}: column '{}' is empty; expected a time on every row", file, line_no,
              Printable(cols[c].header)));
        }
        continue;
      }
      std::optional<double> x = ParseNumber(cell);
      if (!x) {
        return Status::InvalidArgument(fmt::format(
            "{}:{}: column '{}': '{}' is not a number; expected a decimal number{}", file,
            line_no, Printable(cols[c].header), Printable(cell), c == 0 ? "" : " or an empty cell"));
      }
      if (!std::isfinite(*x)) {
        return Status::InvalidArgument(fmt::format(
            "{}:{}: column '{}': '{}' is not a finite number; expected a decimal number{}", file,
            line_no, Printable(cols[c].header), Printable(cell), c == 0 ? "" : " or an empty cell"));
      }
      v[c] = *x * cols[c].scale;
    }
    if (!(v[0] > prev_t)) {
      return Status::InvalidArgument(fmt::format(
          "{}:{}: time {} {} is not after {} {} on line {}; expected strictly increasing time",
          file, line_no, Printable(Trim(fields[static_cast<size_t>(cols[0].index)])), cols[0].unit,
          prev_t / cols[0].scale, cols[0].unit, prev_line));
    }
    prev_t = v[0];
    prev_line = line_no;
    ++out.data_lines;
    const model::Sample s{v[0], v[1], v[2], v[3]};
    if (model::HasSpeed(s)) ++out.speed_readings;
    if (model::HasCurrent(s)) ++out.current_readings;
    if (model::HasVoltage(s)) ++out.voltage_readings;
    if (model::HasSpeed(s) || model::HasCurrent(s) || model::HasVoltage(s)) {
      out.samples.push_back(s);
    }
    return Status::Ok();
  };

  RecordSink sink;
  size_t pos = 0;
  while (pos < text.size()) {
    size_t nl = text.find('\n', pos);
    const size_t end = nl == std::string_view::npos ? text.size() : nl + 1;
    const std::string_view line = text.substr(pos, end - pos);
    pos = end;
    ++line_no;
    if (line.find('\0') != std::string_view::npos) {
      return Status::InvalidArgument(
          fmt::format("{}:{}: a NUL byte; expected text (is this a CSV file?)", file, line_no));
    }
    if (csv_parse(&parser, line.data(), line.size(), OnField, OnRecord, &sink) != line.size()) {
      return Status::InvalidArgument(fmt::format("{}:{}: malformed CSV ({}); expected "
                                                 "comma-separated fields, quotes balanced",
                                                 file, line_no,
                                                 csv_strerror(csv_error(&parser))));
    }
    if (nl == std::string_view::npos) csv_fini(&parser, OnField, OnRecord, &sink);
    if (!sink.record_done) continue;  // blank line, or a quoted field spanning lines
    sink.record_done = false;
    std::vector<std::string> fields = std::move(sink.fields);
    sink.fields.clear();
    if (!have_header) {
      RB_RETURN_IF_ERROR(handle_header(fields));
      have_header = true;
    } else {
      RB_RETURN_IF_ERROR(handle_row(fields));
    }
  }
  if (csv_fini(&parser, OnField, OnRecord, &sink) != 0) {
    return Status::InvalidArgument(fmt::format(
        "{}:{}: malformed CSV at the end of the file ({}); expected balanced quotes", file,
        line_no, csv_strerror(csv_error(&parser))));
  }
  if (sink.record_done && !sink.fields.empty()) {
    if (!have_header) {
      RB_RETURN_IF_ERROR(handle_header(sink.fields));
      have_header = true;
    } else {
      RB_RETURN_IF_ERROR(handle_row(sink.fields));
    }
  }
  if (!have_header) {
    return Status::InvalidArgument(
        file + ": empty file; expected a header line such as time_s,speed_rpm,current_a,voltage_v");
  }
  if (out.samples.empty()) {
    return Status::InvalidArgument(
        fmt::format("{}:{}: no readings after the header; expected at least one row with a "
                    "speed, current or voltage value", file, line_no));
  }
  auto use = [](const Resolved& r) { return ColumnUse{r.header, r.index >= 0 ? r.unit : ""}; };
  out.time = use(cols[0]);
  out.speed = use(cols[1]);
  out.current = use(cols[2]);
  out.voltage = use(cols[3]);
  return out;
}

Result<CsvImportSummary> ReadSamplesCsv(const std::string& path, const CsvImportOptions& options) {
  RB_RETURN_IF_ERROR(ValidateCsvOptions(options));
  std::ifstream in(path, std::ios::binary);
  if (!in) return Status::NotFound(path + ": cannot open for reading; expected a CSV file");
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) return Status::IOError(path + ": read failed");
  return ParseSamplesCsv(ss.str(), path, options);
}

std::string SamplesToCsv(std::span<const model::Sample> samples) {
  std::string out = "time_s,speed_rpm,current_a,voltage_v\n";
  out.reserve(out.size() + samples.size() * 40);
  auto cell = [&out](double v) {
    if (!std::isnan(v)) fmt::format_to(std::back_inserter(out), "{:.12g}", v);
  };
  for (const model::Sample& s : samples) {
    fmt::format_to(std::back_inserter(out), "{:.15g},", s.t);
    cell(model::HasSpeed(s) ? units::RadPerSecToRpm(s.speed) : NAN);
    out += ',';
    cell(s.current);
    out += ',';
    cell(s.voltage);
    out += '\n';
  }
  return out;
}

}  // namespace rb::acquire
