// Batch statistics and the batch verdict.
#include "qa/batch.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>

#include "storage/storage.h"

namespace rb::qa {
namespace {

// Label order as people read it: digit runs compare by value ("M-2" before "M-10").
bool NaturalLess(const std::string& a, const std::string& b) {
  size_t i = 0, j = 0;
  while (i < a.size() && j < b.size()) {
    const bool da = std::isdigit(static_cast<unsigned char>(a[i]));
    const bool db = std::isdigit(static_cast<unsigned char>(b[j]));
    if (da && db) {
      size_t ie = i, je = j;
      while (ie < a.size() && std::isdigit(static_cast<unsigned char>(a[ie]))) ++ie;
      while (je < b.size() && std::isdigit(static_cast<unsigned char>(b[je]))) ++je;
      const std::string na = a.substr(i, ie - i), nb = b.substr(j, je - j);
      const size_t za = na.find_first_not_of('0'), zb = nb.find_first_not_of('0');
      const std::string va = za == std::string::npos ? "" : na.substr(za);
      const std::string vb = zb == std::string::npos ? "" : nb.substr(zb);
      if (va.size() != vb.size()) return va.size() < vb.size();
      if (va != vb) return va < vb;
      i = ie;
      j = je;
    } else {
      if (a[i] != b[j]) return a[i] < b[j];
      ++i;
      ++j;
    }
  }
  return a.size() - i < b.size() - j;
}

}  // namespace

bool QuantityStats::IsOutlier(int m) const {
  for (int i : outliers.indices) {
    if (motors[static_cast<size_t>(i)] == m) return true;
  }
  return false;
}

BatchSummary SummarizeBatch(const std::string& batch, const Spec& spec,
                            std::vector<MotorCheck> motors, std::vector<std::string> unmeasured,
                            const BatchOptions& options) {
  BatchSummary b;
  b.batch = batch;
  b.spec_name = spec.name;
  b.accept_number = spec.accept_number;
  b.options = options;
  b.motors = std::move(motors);
  b.unmeasured = std::move(unmeasured);
  for (const MotorCheck& m : b.motors) {
    if (m.overall == Verdict::kPass) ++b.pass;
    if (m.overall == Verdict::kFail) ++b.fail;
    if (m.overall == Verdict::kInconclusive || m.overall == Verdict::kNotMeasured) {
      ++b.inconclusive;
    }
  }
  const int n_motors = static_cast<int>(b.motors.size());
  // Up to one outlier per five motors, at least one (then it is Grubbs' test).
  const int max_outliers = std::max(1, n_motors / 5);
  b.outlier_test = fmt::format(
      "generalized ESD (Rosner 1983), two-sided, alpha = {:g}, up to {} outlier(s) per quantity "
      "(with 1 it is Grubbs' test); assumes the rest are normal",
      options.outlier_alpha, max_outliers);
  for (const Limit& limit : spec.limits) {
    QuantityStats s;
    s.limit = limit;
    for (int m = 0; m < n_motors; ++m) {
      const QuantityCheck* qc =
          b.motors[static_cast<size_t>(m)].Find(limit.quantity, limit.voltage);
      if (!qc) continue;
      switch (qc->verdict) {
        case Verdict::kPass:
          ++s.pass;
          break;
        case Verdict::kFail:
          ++s.fail;
          break;
        case Verdict::kInconclusive:
          ++s.inconclusive;
          break;
        case Verdict::kNotMeasured:
          ++s.not_measured;
          break;
      }
      if (!qc->measured.available) continue;
      s.motors.push_back(m);
      s.values.push_back(qc->measured.value);
    }
    s.describe = DescribeSample(s.values);
    s.cpk = ComputeCpk(s.describe, limit.lower, limit.upper, options.confidence, options.small_n);
    s.outliers = GeneralizedEsd(s.values, max_outliers, options.outlier_alpha);
    b.stats.push_back(std::move(s));
  }
  const int open = b.inconclusive + static_cast<int>(b.unmeasured.size());
  const int c = b.accept_number;
  const int total = n_motors + static_cast<int>(b.unmeasured.size());
  if (b.fail > c) {
    b.verdict = Verdict::kFail;
    b.verdict_text =
        fmt::format("reject: {} of {} motors fail (accept number {})", b.fail, total, c);
  } else if (b.fail + open <= c) {
    b.verdict = Verdict::kPass;
    b.verdict_text = b.fail == 0 && open == 0
                         ? fmt::format("accept: all {} motors pass", total)
                         : fmt::format("accept: {} fail, {} undecided, within accept number {}",
                                       b.fail, open, c);
  } else {
    b.verdict = Verdict::kInconclusive;
    b.verdict_text = fmt::format(
        "undecided: {} fail, {} inconclusive or unmeasured (accept number {}); re-measure the "
        "inconclusive motors to decide",
        b.fail, open, c);
  }
  return b;
}

Result<BatchSummary> CheckBatch(storage::Database& db, const std::string& batch, const Spec& spec,
                                const BatchOptions& options) {
  Result<std::vector<storage::Motor>> motors = db.ListMotors(batch);
  if (!motors.ok()) return motors.status();
  if (motors->empty()) {
    return Status::NotFound(
        fmt::format("{}: no motors in batch '{}' (see rotorbench motor list)", db.path(), batch));
  }
  std::sort(motors->begin(), motors->end(), [](const storage::Motor& a, const storage::Motor& b) {
    return NaturalLess(a.label, b.label);
  });
  std::vector<MotorCheck> checks;
  std::vector<std::string> unmeasured;
  for (const storage::Motor& m : *motors) {
    Result<MotorCheck> c = CheckMotor(db, m.label, spec, options.check);
    if (c.ok()) {
      checks.push_back(std::move(*c));
    } else if (c.status().code() == Code::kFailedPrecondition) {
      unmeasured.push_back(m.label + ": " + c.status().message());
    } else {
      return c.status();
    }
  }
  return SummarizeBatch(batch, spec, std::move(checks), std::move(unmeasured), options);
}

}  // namespace rb::qa
