// Spec files: TOML (toml++) → Spec, with one-line errors naming the line.
#include "qa/spec.h"

#include "base/text.h"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <sstream>

namespace rb::qa {
namespace {

using units::Quantity;

const std::vector<QuantityInfo> kQuantities = {
    {SpecQuantity::kKv, "kv", "Kv", Quantity::kSpeedConstant, false},
    {SpecQuantity::kKt, "kt", "Kt", Quantity::kTorqueConstant, false},
    {SpecQuantity::kR20, "r20", "R at 20 °C", Quantity::kResistance, false},
    {SpecQuantity::kNoLoadSpeed, "no_load_speed", "no-load speed", Quantity::kSpeed, true},
    {SpecQuantity::kNoLoadCurrent, "no_load_current", "no-load current", Quantity::kCurrent, true},
    {SpecQuantity::kStallCurrent, "stall_current", "stall current", Quantity::kCurrent, true},
    {SpecQuantity::kStallTorque, "stall_torque", "stall torque", Quantity::kTorque, true},
    {SpecQuantity::kFrictionTorque, "friction_torque", "friction torque", Quantity::kTorque, false},
    {SpecQuantity::kInertia, "inertia", "inertia", Quantity::kInertia, false},
};

constexpr std::string_view kTopKeys = "rotorbench_spec, name, description, voltage_V, batch";
constexpr std::string_view kLimitKeys =
    "unit, nominal, tolerance, tolerance_percent, min, max, voltage_V";

std::string Lower(std::string_view s) {
  std::string out(s);
  for (char& ch : out) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  return out;
}

const QuantityInfo* FindQuantity(std::string_view key) {
  for (const QuantityInfo& q : kQuantities) {
    if (q.key == key) return &q;
  }
  return nullptr;
}

class Parser {
 public:
  explicit Parser(const std::string& source) : source_(source) {}

  Status Error(const toml::source_region& where, const std::string& message) const {
    // Messages quote keys and values from the file: keep them on one line.
    return Status::InvalidArgument(
        fmt::format("{}:{}: {}", source_, where.begin.line, Printable(message, 300)));
  }

  Result<double> Number(const toml::node& node, std::string_view what) const {
    if (!node.is_number()) {
      return Error(node.source(), fmt::format("{} must be a number", what));
    }
    const double v = *node.value<double>();
    if (!std::isfinite(v)) return Error(node.source(), fmt::format("{} must be finite", what));
    return v;
  }

  Status ParseLimit(const QuantityInfo& q, const toml::table& t, std::optional<double> voltage,
                    Spec* spec) const {
    const std::string where = fmt::format("[{}]", q.key);
    Limit limit;
    limit.quantity = q.id;
    limit.line = static_cast<int>(t.source().begin.line);
    std::optional<double> nominal, tol, tol_pct, lo, hi, table_voltage;
    const toml::node* lo_node = nullptr;
    const toml::node* nominal_node = nullptr;
    bool has_unit = false;
    for (auto&& [key, node] : t) {
      const std::string_view k = key.str();
      if (k == "unit") {
        if (!node.is_string()) return Error(node.source(), where + " unit must be a string");
        const std::string unit = *node.value<std::string>();
        const std::optional<units::UnitDef> def = units::FindUnit(q.unit_quantity, unit);
        if (!def) {
          return Error(node.source(),
                       fmt::format("{} unit \"{}\" is not a {} unit; expected one of: {}", where,
                                   unit, units::QuantityName(q.unit_quantity),
                                   units::AcceptedUnits(q.unit_quantity)));
        }
        limit.unit = unit;
        limit.unit_scale = def->scale;
        has_unit = true;
        continue;
      }
      std::optional<double>* slot = k == "nominal"             ? &nominal
                                    : k == "tolerance"         ? &tol
                                    : k == "tolerance_percent" ? &tol_pct
                                    : k == "min"               ? &lo
                                    : k == "max"               ? &hi
                                    : k == "voltage_V"         ? &table_voltage
                                                               : nullptr;
      if (!slot) {
        return Error(key.source(), fmt::format("{} has no setting '{}'; expected one of: {}", where,
                                               k, kLimitKeys));
      }
      Result<double> v = Number(node, fmt::format("{} {}", where, k));
      if (!v.ok()) return v.status();
      *slot = *v;
      if (k == "min") lo_node = &node;
      if (k == "nominal") nominal_node = &node;
    }
    const toml::source_region& here = t.source();
    if (!has_unit) {
      return Error(here, fmt::format("{} has no unit; expected unit = \"...\", one of: {}", where,
                                     units::AcceptedUnits(q.unit_quantity)));
    }
    const bool pm = tol || tol_pct;
    const bool minmax = lo || hi;
    if (tol && tol_pct) {
      return Error(here, where + " gives both tolerance and tolerance_percent; expected one");
    }
    if (pm && minmax) {
      return Error(here, where + " gives a ± tolerance and min/max; expected one or the other");
    }
    if (!pm && !minmax) {
      return Error(here, where +
                             " has no limits; expected tolerance, tolerance_percent, or "
                             "min and/or max");
    }
    const double s = limit.unit_scale;
    if (pm) {
      if (!nominal) return Error(here, where + " has a ± tolerance but no nominal");
      const double width = tol ? *tol : std::fabs(*nominal) * *tol_pct / 100.0;
      if (!((tol ? *tol : *tol_pct) > 0)) {
        return Error(here, where + " tolerance must be above 0");
      }
      limit.lower = (*nominal - width) * s;
      limit.upper = (*nominal + width) * s;
      limit.tolerance =
          tol ? fmt::format("± {:g} {}", *tol, limit.unit) : fmt::format("± {:g} %", *tol_pct);
    } else {
      if (lo && hi && *lo > *hi) {
        return Error(
            lo_node->source(),
            fmt::format("{} min {:g} is above max {:g}; expected min ≤ max", where, *lo, *hi));
      }
      if (nominal && ((lo && *nominal < *lo) || (hi && *nominal > *hi))) {
        return Error(nominal_node->source(),
                     fmt::format("{} nominal {:g} lies outside min/max", where, *nominal));
      }
      if (lo) limit.lower = *lo * s;
      if (hi) limit.upper = *hi * s;
      limit.tolerance = lo && hi ? "min/max" : lo ? "min only" : "max only";
    }
    if (nominal) limit.nominal = *nominal * s;
    if (q.needs_voltage) {
      const std::optional<double> v = table_voltage ? table_voltage : voltage;
      if (!v) {
        return Error(here, fmt::format("{} depends on the supply voltage and none is given; "
                                       "expected voltage_V = ... in the table or at the top",
                                       where));
      }
      if (!(*v > 0)) return Error(here, where + " voltage_V must be above 0");
      limit.voltage = *v;
    } else if (table_voltage) {
      return Error(
          here, fmt::format("{} does not depend on the supply voltage; remove voltage_V", where));
    }
    for (const Limit& other : spec->limits) {
      if (other.quantity == limit.quantity && other.voltage == limit.voltage) {
        return Error(here, fmt::format("{} repeats the limit of line {}", where, other.line));
      }
    }
    spec->limits.push_back(std::move(limit));
    return Status::Ok();
  }

  Result<Spec> Parse(const toml::table& root) const {
    Spec spec;
    spec.source = source_;
    std::optional<double> voltage;
    bool has_version = false;
    // Settings first (a default voltage may follow the tables in file order).
    if (const toml::node* v = root.get("voltage_V")) {
      Result<double> volts = Number(*v, "voltage_V");
      if (!volts.ok()) return volts.status();
      if (!(*volts > 0)) return Error(v->source(), "voltage_V must be above 0");
      voltage = *volts;
    }
    for (auto&& [key, node] : root) {
      const std::string_view k = key.str();
      if (k == "rotorbench_spec") {
        if (!node.is_integer()) {
          return Error(node.source(), "rotorbench_spec must be an integer (the format version)");
        }
        const std::int64_t version = *node.value<std::int64_t>();
        if (version > kSpecFormatVersion) {
          return Error(node.source(),
                       fmt::format("spec format {} is newer than this rotorbench reads ({}); "
                                   "update rotorbench",
                                   version, kSpecFormatVersion));
        }
        if (version < 1) {
          return Error(node.source(), fmt::format("rotorbench_spec = {}: expected {}", version,
                                                  kSpecFormatVersion));
        }
        spec.format_version = static_cast<int>(version);
        has_version = true;
      } else if (k == "name" || k == "description") {
        if (!node.is_string()) return Error(node.source(), std::string(k) + " must be a string");
        (k == "name" ? spec.name : spec.description) = *node.value<std::string>();
      } else if (k == "voltage_V") {
        // read above
      } else if (k == "batch") {
        const toml::table* t = node.as_table();
        if (!t) return Error(node.source(), "batch must be a table ([batch])");
        for (auto&& [bk, bn] : *t) {
          if (bk.str() != "accept_number") {
            return Error(bk.source(), fmt::format("[batch] has no setting '{}'; expected "
                                                  "accept_number",
                                                  bk.str()));
          }
          if (!bn.is_integer() || *bn.value<std::int64_t>() < 0) {
            return Error(bn.source(), "[batch] accept_number must be a whole number ≥ 0");
          }
          spec.accept_number = static_cast<int>(*bn.value<std::int64_t>());
        }
      } else if (const QuantityInfo* q = FindQuantity(k)) {
        if (const toml::table* t = node.as_table()) {
          RB_RETURN_IF_ERROR(ParseLimit(*q, *t, voltage, &spec));
        } else if (const toml::array* a = node.as_array(); a && a->is_array_of_tables()) {
          for (const toml::node& el : *a) {
            RB_RETURN_IF_ERROR(ParseLimit(*q, *el.as_table(), voltage, &spec));
          }
        } else {
          return Error(node.source(), fmt::format("{} must be a table ([{}] or [[{}]])", k, k, k));
        }
      } else {
        std::string hint;
        if (FindQuantity(Lower(k))) hint = fmt::format(" (did you mean '{}'?)", Lower(k));
        return Error(key.source(),
                     fmt::format("unknown quantity or setting '{}'{}; expected one of: {}, {}", k,
                                 hint, kTopKeys, QuantityKeys()));
      }
    }
    if (!has_version) {
      return Status::InvalidArgument(
          fmt::format("{}:1: no format version; expected rotorbench_spec = {} at the top", source_,
                      kSpecFormatVersion));
    }
    if (spec.name.empty()) {
      return Status::InvalidArgument(
          fmt::format("{}:1: no name; expected name = \"...\" at the top", source_));
    }
    // toml++ tables iterate by key; show the quantities in file order.
    std::stable_sort(spec.limits.begin(), spec.limits.end(),
                     [](const Limit& a, const Limit& b) { return a.line < b.line; });
    if (spec.limits.empty()) {
      return Status::InvalidArgument(
          fmt::format("{}: no quantities; expected at least one of: {}", source_, QuantityKeys()));
    }
    return spec;
  }

 private:
  std::string source_;
};

}  // namespace

const std::vector<QuantityInfo>& AllQuantities() { return kQuantities; }

const QuantityInfo& Info(SpecQuantity q) {
  for (const QuantityInfo& i : kQuantities) {
    if (i.id == q) return i;
  }
  return kQuantities.front();
}

std::string QuantityKeys() {
  std::string out;
  for (const QuantityInfo& q : kQuantities) {
    if (!out.empty()) out += ", ";
    out += q.key;
  }
  return out;
}

std::string Limit::Label() const {
  const QuantityInfo& q = Info(quantity);
  if (q.needs_voltage) return fmt::format("{} at {:g} V", q.title, voltage);
  return std::string(q.title);
}

Result<Spec> ParseSpec(std::string_view text, const std::string& source) {
  toml::table root;
  try {
    root = toml::parse(text, source);
  } catch (const toml::parse_error& e) {
    return Status::InvalidArgument(
        fmt::format("{}:{}: {}", source, e.source().begin.line, Printable(e.description(), 200)));
  }
  return Parser(source).Parse(root);
}

Result<Spec> LoadSpec(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return Status::NotFound(fmt::format("{}: cannot open the spec file", path));
  std::ostringstream buf;
  buf << in.rdbuf();
  if (in.bad()) return Status::IOError(fmt::format("{}: cannot read the spec file", path));
  return ParseSpec(buf.str(), path);
}

}  // namespace rb::qa
