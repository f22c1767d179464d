// Text, CSV and JSON forms of qa results.
#include "qa/format.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

namespace rb::qa {
namespace {

using nlohmann::json;

// Decimals that show U with two significant digits.
int DecimalsFor(double u) {
  if (!(u > 0) || !std::isfinite(u)) return -1;
  return std::max(0, 1 - static_cast<int>(std::floor(std::log10(u))));
}

std::string Fixed(double v, int decimals) {
  if (!std::isfinite(v)) return "-";
  if (decimals < 0) return fmt::format("{:.5g}", v);
  return fmt::format("{:.{}f}", v, decimals);
}

json Num(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }

// A fraction shown as percent without float dust (0.07 · 100 = 7.000000000000001).
double Percent(double fraction) { return std::stod(fmt::format("{:.12g}", fraction * 100.0)); }

// Width of a UTF-8 string in terminal columns (one per code point; good enough here).
size_t Columns(const std::string& s) {
  size_t n = 0;
  for (unsigned char ch : s) n += (ch & 0xC0) != 0x80;
  return n;
}

// A small aligned text table: first column left, the rest left unless numeric-looking.
class TextTable {
 public:
  explicit TextTable(std::vector<std::string> header) { rows_.push_back(std::move(header)); }
  void Row(std::vector<std::string> cells) { rows_.push_back(std::move(cells)); }
  std::string Render() const {
    std::vector<size_t> w;
    for (const auto& r : rows_) {
      if (w.size() < r.size()) w.resize(r.size(), 0);
      for (size_t c = 0; c < r.size(); ++c) w[c] = std::max(w[c], Columns(r[c]));
    }
    std::string out;
    auto line = [&](const std::vector<std::string>& r) {
      std::string s;
      for (size_t c = 0; c < w.size(); ++c) {
        const std::string cell = c < r.size() ? r[c] : "";
        if (c) s += "  ";
        s += cell + std::string(w[c] - Columns(cell), ' ');
      }
      while (!s.empty() && s.back() == ' ') s.pop_back();
      out += s + "\n";
    };
    line(rows_[0]);
    std::vector<std::string> rule;
    for (size_t x : w) rule.push_back(std::string(x, '-'));
    line(rule);
    for (size_t i = 1; i < rows_.size(); ++i) line(rows_[i]);
    return out;
  }

 private:
  std::vector<std::vector<std::string>> rows_;
};

std::string Heading(const Limit& l) { return fmt::format("{} [{}]", l.Label(), l.unit); }

std::string ColumnKey(const Limit& l) {
  const QuantityInfo& q = Info(l.quantity);
  if (q.needs_voltage) return fmt::format("{}@{:g}V", q.key, l.voltage);
  return std::string(q.key);
}

std::string Marker(Verdict v) {
  switch (v) {
    case Verdict::kPass:
      return "ok";
    case Verdict::kFail:
      return "FAIL";
    case Verdict::kInconclusive:
      return "??";
    case Verdict::kNotMeasured:
      return "--";
  }
  return "";
}

std::string Upper(std::string s) {
  for (char& ch : s) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
  return s;
}

json LimitJson(const Limit& l) {
  json j = {{"key", std::string(Info(l.quantity).key)},
            {"label", l.Label()},
            {"unit", l.unit},
            {"tolerance", l.tolerance},
            {"line", l.line}};
  j["nominal"] = l.nominal ? Num(l.ToUnit(*l.nominal)) : json(nullptr);
  j["lower"] = l.lower ? Num(l.ToUnit(*l.lower)) : json(nullptr);
  j["upper"] = l.upper ? Num(l.ToUnit(*l.upper)) : json(nullptr);
  j["voltage_V"] = Info(l.quantity).needs_voltage ? json(l.voltage) : json(nullptr);
  return j;
}

json ItemJson(const QuantityCheck& q) {
  json j = LimitJson(q.limit);
  j["measured"] = q.measured.available ? Num(q.limit.ToUnit(q.measured.value)) : json(nullptr);
  j["u"] = q.measured.available ? Num(q.limit.ToUnit(q.measured.u)) : json(nullptr);
  j["U"] = q.measured.available ? Num(q.limit.ToUnit(q.expanded_u)) : json(nullptr);
  j["margin"] = q.measured.available ? Num(q.limit.ToUnit(q.margin)) : json(nullptr);
  j["verdict"] = VerdictName(q.verdict);
  if (!q.measured.note.empty()) j["note"] = q.measured.note;
  return j;
}

}  // namespace

std::string FormatValueU(double value, double expanded_u) {
  const int d = DecimalsFor(expanded_u);
  if (d < 0) return Fixed(value, -1);
  return fmt::format("{} ± {}", Fixed(value, d), Fixed(expanded_u, d));
}

std::string FormatLimits(const Limit& l) {
  if (l.lower && l.upper) {
    return fmt::format("{:g} … {:g}", l.ToUnit(*l.lower), l.ToUnit(*l.upper));
  }
  if (l.upper) return fmt::format("≤ {:g}", l.ToUnit(*l.upper));
  if (l.lower) return fmt::format("≥ {:g}", l.ToUnit(*l.lower));
  return "-";
}

std::string FormatCheck(const MotorCheck& c) {
  const bool gb = c.options.rule == DecisionRule::kGuardBand;
  std::string out = fmt::format("motor {} against \"{}\"", c.motor, c.spec_name);
  if (c.fit_id) out += fmt::format(" (fit {}, {})", c.fit_id, c.fit_created_utc.substr(0, 19));
  out +=
      fmt::format("\nrule: {} (k = {:g})\n\n", RuleName(c.options.rule), c.options.coverage_factor);
  TextTable t({"quantity", fmt::format("measured ± U (k = {:g})", c.options.coverage_factor),
               "limits", "margin", "verdict"});
  for (const QuantityCheck& q : c.items) {
    const Limit& l = q.limit;
    if (!q.measured.available) {
      t.Row({Heading(l), "-", FormatLimits(l), "-", VerdictName(q.verdict)});
      continue;
    }
    const int d = DecimalsFor(l.ToUnit(q.expanded_u));
    t.Row({Heading(l), FormatValueU(l.ToUnit(q.measured.value), l.ToUnit(q.expanded_u)),
           FormatLimits(l), Fixed(l.ToUnit(q.margin), d), VerdictName(q.verdict)});
  }
  out += t.Render();
  for (const QuantityCheck& q : c.items) {
    if (!q.measured.note.empty())
      out += fmt::format("  {}: {}\n", q.limit.Label(), q.measured.note);
  }
  for (const std::string& n : c.notes) out += "  note: " + n + "\n";
  out += fmt::format("\noverall: {} — ", Upper(VerdictName(c.overall)));
  switch (c.overall) {
    case Verdict::kPass:
      out += gb ? "conformance proven for every quantity\n" : "every quantity inside its limits\n";
      break;
    case Verdict::kFail:
      out += gb ? "non-conformance proven for at least one quantity\n"
                : "at least one quantity outside its limits\n";
      break;
    default:
      out += "at least one quantity could not be decided; measure again or with a longer plan\n";
      out += std::string(kBenchCaution) + "\n";
      break;
  }
  return out;
}

json CheckJson(const MotorCheck& c) {
  json items = json::array();
  for (const QuantityCheck& q : c.items) items.push_back(ItemJson(q));
  return {{"motor", c.motor},
          {"spec", c.spec_name},
          {"fit_id", c.fit_id},
          {"fit_created_utc", c.fit_created_utc},
          {"rule", RuleName(c.options.rule)},
          {"coverage_factor", c.options.coverage_factor},
          {"quantities", items},
          {"verdict", VerdictName(c.overall)},
          {"notes", c.notes}};
}

std::string FormatBatchTable(const BatchSummary& b) {
  std::string out = fmt::format(
      "batch {} against \"{}\": {} motors checked, rule {} (k = {:g})\n\n", b.batch, b.spec_name,
      b.motors.size(), RuleName(b.options.check.rule), b.options.check.coverage_factor);
  std::vector<std::string> header = {"motor", "verdict"};
  for (const QuantityStats& s : b.stats) header.push_back(Heading(s.limit));
  TextTable motors(header);
  for (size_t m = 0; m < b.motors.size(); ++m) {
    const MotorCheck& mc = b.motors[m];
    std::vector<std::string> row = {mc.motor, VerdictName(mc.overall)};
    for (const QuantityStats& s : b.stats) {
      const QuantityCheck* q = mc.Find(s.limit.quantity, s.limit.voltage);
      if (!q || !q->measured.available) {
        row.push_back("--");
        continue;
      }
      std::string cell =
          FormatValueU(s.limit.ToUnit(q->measured.value), s.limit.ToUnit(q->expanded_u)) + " " +
          Marker(q->verdict);
      if (s.IsOutlier(static_cast<int>(m))) cell += " *";
      row.push_back(cell);
    }
    motors.Row(row);
  }
  for (const std::string& u : b.unmeasured) {
    motors.Row({u.substr(0, u.find(':')), "not measured"});
  }
  out += motors.Render();
  out +=
      "ok = conformance proven, FAIL = non-conformance proven, ?? = inconclusive, "
      "* = outlier\n\n";

  TextTable stats({"quantity", "limits", "n", "mean", "sd", "min", "max",
                   fmt::format("Cpk [{:g} % CI]", b.options.confidence * 100), "ok/FAIL/??"});
  for (const QuantityStats& s : b.stats) {
    const Limit& l = s.limit;
    const auto u = [&](double v) { return fmt::format("{:.5g}", l.ToUnit(v)); };
    const std::string cpk = s.cpk.available ? fmt::format("{:.2f} [{:.2f}, {:.2f}]", s.cpk.cpk,
                                                          s.cpk.lower, s.cpk.upper)
                                            : "-";
    stats.Row({Heading(l), FormatLimits(l), std::to_string(s.describe.n),
               s.describe.n ? u(s.describe.mean) : "-", s.describe.n > 1 ? u(s.describe.sd) : "-",
               s.describe.n ? u(s.describe.min) : "-", s.describe.n ? u(s.describe.max) : "-", cpk,
               fmt::format("{}/{}/{}", s.pass, s.fail, s.inconclusive + s.not_measured)});
  }
  out += stats.Render();
  std::vector<std::string> cautions;
  for (const QuantityStats& s : b.stats) {
    if (s.cpk.small_sample) {
      cautions.push_back(fmt::format(
          "small sample (n = {} < {}): every Cpk here is a rough guide; read its {:g} % interval",
          s.describe.n, b.options.small_n, b.options.confidence * 100));
    } else if (!s.cpk.note.empty()) {
      cautions.push_back(fmt::format("{}: {}", s.limit.Label(), s.cpk.note));
    }
    if (!s.outliers.tested) {
      cautions.push_back(fmt::format("{}: no outlier test ({})", s.limit.Label(), s.outliers.note));
    }
  }
  std::sort(cautions.begin(), cautions.end());
  cautions.erase(std::unique(cautions.begin(), cautions.end()), cautions.end());
  out += "\nOutliers: " + b.outlier_test + ".\n";
  out +=
      "Cpk is normal-theory with Bissell's approximate interval; the spread includes "
      "measurement uncertainty.\n";
  for (const std::string& c : cautions) out += "  caution: " + c + "\n";
  for (const std::string& u : b.unmeasured) out += "  not measured: " + u + "\n";
  out += fmt::format("\nbatch verdict: {} — {}\n", Upper(VerdictName(b.verdict)), b.verdict_text);
  if (b.verdict == Verdict::kInconclusive) out += std::string(kBenchCaution) + "\n";
  return out;
}

std::string FormatBatchCsv(const BatchSummary& b) {
  auto quote = [](const std::string& s) {
    if (s.find_first_of(",\"\n") == std::string::npos) return s;
    std::string q = "\"";
    for (char ch : s) q += ch == '"' ? std::string("\"\"") : std::string(1, ch);
    return q + "\"";
  };
  std::vector<std::string> header = {"row", "verdict"};
  for (const QuantityStats& s : b.stats) {
    const std::string k = ColumnKey(s.limit);
    header.push_back(fmt::format("{} [{}]", k, s.limit.unit));
    header.push_back(k + " U");
    header.push_back(k + " verdict");
  }
  std::string out;
  auto emit = [&](const std::vector<std::string>& cells) {
    for (size_t i = 0; i < cells.size(); ++i) out += (i ? "," : "") + quote(cells[i]);
    out += "\n";
  };
  emit(header);
  auto g = [](double v) { return std::isfinite(v) ? fmt::format("{:.10g}", v) : std::string(); };
  for (size_t m = 0; m < b.motors.size(); ++m) {
    const MotorCheck& mc = b.motors[m];
    std::vector<std::string> row = {mc.motor, VerdictName(mc.overall)};
    for (const QuantityStats& s : b.stats) {
      const QuantityCheck* q = mc.Find(s.limit.quantity, s.limit.voltage);
      const bool ok = q && q->measured.available;
      row.push_back(ok ? g(s.limit.ToUnit(q->measured.value)) : "");
      row.push_back(ok ? g(s.limit.ToUnit(q->expanded_u)) : "");
      std::string v = q ? VerdictName(q->verdict) : "not measured";
      if (s.IsOutlier(static_cast<int>(m))) v += "; outlier";
      row.push_back(v);
    }
    emit(row);
  }
  for (const std::string& u : b.unmeasured) emit({u.substr(0, u.find(':')), "not measured"});
  struct StatRow {
    const char* name;
    double (*get)(const QuantityStats&);
    bool in_unit;
  };
  const StatRow rows[] = {
      {"mean", [](const QuantityStats& s) { return s.describe.n ? s.describe.mean : NAN; }, true},
      {"sd", [](const QuantityStats& s) { return s.describe.n > 1 ? s.describe.sd : NAN; }, true},
      {"min", [](const QuantityStats& s) { return s.describe.n ? s.describe.min : NAN; }, true},
      {"max", [](const QuantityStats& s) { return s.describe.n ? s.describe.max : NAN; }, true},
      {"Cpk", [](const QuantityStats& s) { return s.cpk.available ? s.cpk.cpk : NAN; }, false},
      {"Cpk CI low", [](const QuantityStats& s) { return s.cpk.available ? s.cpk.lower : NAN; },
       false},
      {"Cpk CI high", [](const QuantityStats& s) { return s.cpk.available ? s.cpk.upper : NAN; },
       false},
  };
  for (const StatRow& r : rows) {
    std::vector<std::string> row = {r.name, ""};
    for (const QuantityStats& s : b.stats) {
      const double v = r.get(s);
      row.push_back(g(r.in_unit ? s.limit.ToUnit(v) : v));
      row.push_back("");
      row.push_back("");
    }
    emit(row);
  }
  emit({"batch verdict", VerdictName(b.verdict), b.verdict_text});
  return out;
}

json BatchJson(const BatchSummary& b) {
  json motors = json::array();
  for (size_t m = 0; m < b.motors.size(); ++m) {
    json j = CheckJson(b.motors[m]);
    for (size_t i = 0; i < j["quantities"].size() && i < b.stats.size(); ++i) {
      j["quantities"][i]["outlier"] = b.stats[i].IsOutlier(static_cast<int>(m));
    }
    motors.push_back(j);
  }
  json stats = json::array();
  for (const QuantityStats& s : b.stats) {
    const Limit& l = s.limit;
    json j = LimitJson(l);
    const bool has = s.describe.n > 0;
    j["n"] = s.describe.n;
    j["mean"] = has ? Num(l.ToUnit(s.describe.mean)) : json(nullptr);
    j["sd"] = s.describe.n > 1 ? Num(l.ToUnit(s.describe.sd)) : json(nullptr);
    j["min"] = has ? Num(l.ToUnit(s.describe.min)) : json(nullptr);
    j["max"] = has ? Num(l.ToUnit(s.describe.max)) : json(nullptr);
    j["cpk"] = {{"value", s.cpk.available ? Num(s.cpk.cpk) : json(nullptr)},
                {"lower", s.cpk.available ? Num(s.cpk.lower) : json(nullptr)},
                {"upper", s.cpk.available ? Num(s.cpk.upper) : json(nullptr)},
                {"confidence", s.cpk.confidence},
                {"note", s.cpk.note}};
    json flagged = json::array();
    for (int i : s.outliers.indices) {
      flagged.push_back(b.motors[static_cast<size_t>(s.motors[static_cast<size_t>(i)])].motor);
    }
    json steps = json::array();
    for (const EsdStep& st : s.outliers.steps) {
      steps.push_back(
          {{"motor", b.motors[static_cast<size_t>(s.motors[static_cast<size_t>(st.index)])].motor},
           {"statistic", Num(st.statistic)},
           {"critical", Num(st.critical)}});
    }
    j["outliers"] = {{"tested", s.outliers.tested},
                     {"motors", flagged},
                     {"steps", steps},
                     {"note", s.outliers.note}};
    j["counts"] = {{"pass", s.pass},
                   {"fail", s.fail},
                   {"inconclusive", s.inconclusive},
                   {"not_measured", s.not_measured}};
    stats.push_back(j);
  }
  return {{"batch", b.batch},
          {"spec", b.spec_name},
          {"rule", RuleName(b.options.check.rule)},
          {"coverage_factor", b.options.check.coverage_factor},
          {"accept_number", b.accept_number},
          {"outlier_test", b.outlier_test},
          {"motors", motors},
          {"unmeasured", b.unmeasured},
          {"quantities", stats},
          {"counts",
           {{"pass", b.pass},
            {"fail", b.fail},
            {"inconclusive", b.inconclusive},
            {"not_measured", b.unmeasured.size()}}},
          {"verdict", VerdictName(b.verdict)},
          {"verdict_text", b.verdict_text}};
}

std::string FormatPlan(const SamplingPlan& p) {
  const PlanOptions& o = p.options;
  std::string out = fmt::format(
      "lot of {}: inspect n = {} motors; accept the lot with at most c = {} defective, reject "
      "with {} or more\n",
      o.lot, p.n, p.c, p.c + 1);
  out += fmt::format(
      "  producer's risk at AQL {:g} %: {:.4f} (allowed {:g}); consumer's risk at LTPD {:g} %: "
      "{:.4f} (allowed {:g})\n",
      o.aql * 100, 1.0 - p.pa_aql, o.alpha, o.ltpd * 100, p.pa_ltpd, o.beta);
  out += fmt::format(
      "  operating characteristic: {} ({})\n\n", OcModelName(p.model),
      p.model == OcModel::kBinomial
          ? fmt::format("the sample is at most {:g} % of the lot", o.small_lot_fraction * 100)
          : fmt::format("the sample is over {:g} % of the lot: drawn without replacement",
                        o.small_lot_fraction * 100));
  TextTable t({"defective %", "P(accept)"});
  for (const OcPoint& pt : p.oc)
    t.Row({fmt::format("{:.3g}", pt.p * 100), fmt::format("{:.4f}", pt.pa)});
  out += t.Render();
  return out;
}

json PlanJson(const SamplingPlan& p) {
  json oc = json::array();
  for (const OcPoint& pt : p.oc) oc.push_back({{"p_percent", Percent(pt.p)}, {"pa", pt.pa}});
  return {{"n", p.n},
          {"c", p.c},
          {"lot", p.options.lot},
          {"aql_percent", Percent(p.options.aql)},
          {"ltpd_percent", Percent(p.options.ltpd)},
          {"alpha", p.options.alpha},
          {"beta", p.options.beta},
          {"oc_model", OcModelName(p.model)},
          {"pa_at_aql", p.pa_aql},
          {"pa_at_ltpd", p.pa_ltpd},
          {"oc", oc}};
}

}  // namespace rb::qa
