#include "acquire/text_instrument.h"

#include <cmath>
#include <cstdlib>

#include "acquire/toml_util.h"
#include "base/text.h"

namespace rb::acquire {
namespace {

Result<TextInstrumentMap> FromDoc(const TomlDoc& doc) {
  TextInstrumentMap m;
  const toml::table& root = doc.root();
  RB_RETURN_IF_ERROR(CheckKeys(doc, root, {"name", "separators", "latency_s", "match", "field"}, ""));
  // The name appears in messages and run metadata: keep it printable and on one line.
  if (auto v = GetString(doc, root, "name"); !v.ok()) return v.status(); else if (*v) m.name = Printable(**v, 80);
  if (auto v = GetString(doc, root, "separators"); !v.ok()) return v.status(); else if (*v) m.separators = **v;
  if (auto v = GetNumber(doc, root, "latency_s"); !v.ok()) return v.status(); else if (*v) m.latency_s = **v;
  Result<const toml::table*> match = GetTable(doc, root, "match");
  if (!match.ok()) return match.status();
  if (*match) {
    RB_RETURN_IF_ERROR(CheckKeys(doc, **match, {"field", "text"}, "match"));
    auto f = GetNumber(doc, **match, "field");
    auto t = GetString(doc, **match, "text");
    if (!f.ok()) return f.status();
    if (!t.ok()) return t.status();
    if (!*f || !*t) return Status::InvalidArgument(Where(doc, root, "match") + ": [match] needs field and text");
    m.match_field = static_cast<int>(**f);
    m.match_text = **t;
  }
  const toml::array* fields = root["field"].as_array();
  if (!fields || fields->empty()) {
    return Status::InvalidArgument(doc.name() + ": no [[field]] tables; expected at least one field mapping");
  }
  for (const toml::node& n : *fields) {
    const toml::table* t = n.as_table();
    if (!t) return Status::InvalidArgument(doc.name() + ": [[field]] must be tables");
    RB_RETURN_IF_ERROR(CheckKeys(doc, *t, {"index", "quantity", "unit"}, "field"));
    auto idx = GetNumber(doc, *t, "index");
    auto q = GetString(doc, *t, "quantity");
    auto u = GetString(doc, *t, "unit");
    if (!idx.ok()) return idx.status();
    if (!q.ok()) return q.status();
    if (!u.ok()) return u.status();
    const std::string where = Where(doc, *t, "quantity");
    if (!*idx || **idx < 1) return Status::InvalidArgument(where + ": field index must be 1 or more");
    if (!*q || !*u) return Status::InvalidArgument(where + ": a field needs quantity and unit");
    TextField f;
    f.index = static_cast<int>(**idx);
    if (**q == "speed") {
      f.quantity = units::Quantity::kSpeed;
    } else if (**q == "current") {
      f.quantity = units::Quantity::kCurrent;
    } else if (**q == "voltage") {
      f.quantity = units::Quantity::kVoltage;
    } else {
      return Status::InvalidArgument(where + ": quantity '" + Printable(**q) + "'; expected speed, current or voltage");
    }
    std::optional<units::UnitDef> def = units::FindUnit(f.quantity, **u);
    if (!def) {
      return Status::InvalidArgument(where + ": unit '" + Printable(**u) + "' is not a " + units::QuantityName(f.quantity) +
                                     " unit; expected one of " + units::AcceptedUnits(f.quantity));
    }
    f.scale = def->scale;
    f.unit = **u;
    m.fields.push_back(f);
  }
  if (m.name.empty()) m.name = doc.name();
  return m;
}

std::vector<std::string_view> Split(std::string_view line, const std::string& seps) {
  std::vector<std::string_view> out;
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && seps.find(line[i]) != std::string::npos) ++i;
    const std::size_t start = i;
    while (i < line.size() && seps.find(line[i]) == std::string::npos) ++i;
    if (i > start) out.push_back(line.substr(start, i - start));
  }
  return out;
}

}  // namespace

Result<TextInstrumentMap> LoadTextInstrumentMap(const std::string& path) {
  Result<TomlDoc> doc = TomlDoc::Parse(path);
  if (!doc.ok()) return doc.status();
  return FromDoc(*doc);
}

Result<TextInstrumentMap> ParseTextInstrumentMap(const std::string& toml_text, const std::string& name) {
  Result<TomlDoc> doc = TomlDoc::ParseText(toml_text, name);
  if (!doc.ok()) return doc.status();
  return FromDoc(*doc);
}

Result<std::optional<model::Sample>> ParseTextLine(const TextInstrumentMap& map, std::string_view line,
                                                   double t) {
  const std::vector<std::string_view> f = Split(line, map.separators);
  if (f.empty()) return std::optional<model::Sample>();
  if (map.match_field > 0) {
    if (static_cast<int>(f.size()) < map.match_field || f[static_cast<std::size_t>(map.match_field - 1)] != map.match_text) {
      return std::optional<model::Sample>();
    }
  }
  model::Sample s;
  s.t = t - map.latency_s;
  for (const TextField& tf : map.fields) {
    if (static_cast<int>(f.size()) < tf.index) {
      return Status::InvalidArgument(map.name + ": line '" + Printable(line) + "' has " + std::to_string(f.size()) +
                                     " fields; expected field " + std::to_string(tf.index));
    }
    std::string cell(f[static_cast<std::size_t>(tf.index - 1)]);
    if (cell.size() > tf.unit.size() && cell.compare(cell.size() - tf.unit.size(), tf.unit.size(), tf.unit) == 0) {
      cell.resize(cell.size() - tf.unit.size());  // "1234rpm"
    }
    char* end = nullptr;
    const double v = std::strtod(cell.c_str(), &end);
    if (cell.empty() || end != cell.c_str() + cell.size() || !std::isfinite(v)) {
      return Status::InvalidArgument(map.name + ": field " + std::to_string(tf.index) + " '" + Printable(cell) +
                                     "' is not a number; expected a " + units::QuantityName(tf.quantity) +
                                     " in " + tf.unit);
    }
    const double si = v * tf.scale;
    switch (tf.quantity) {
      case units::Quantity::kSpeed: s.speed = si; break;
      case units::Quantity::kCurrent: s.current = si; break;
      default: s.voltage = si; break;
    }
  }
  return std::optional<model::Sample>(s);
}

void LineSplitter::Feed(std::string_view bytes, std::vector<std::string>* lines) {
  for (char c : bytes) {
    if (c == '\n' || c == '\r') {
      if (!skipping_ && !partial_.empty()) lines->push_back(partial_);
      partial_.clear();
      skipping_ = false;
      continue;
    }
    if (skipping_) continue;
    partial_.push_back(c);
    if (partial_.size() > 512) {
      ++overlong_;
      partial_.clear();
      skipping_ = true;
    }
  }
}

}  // namespace rb::acquire
