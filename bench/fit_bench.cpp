// The motor fit: time and memory against data size, the quick plan, and statistical
// efficiency (RMS error over seeds divided by the Cramér–Rao bound).
//
// 1. Standard plan (6 locked-rotor positions, spin-ups at 3 V and 6 V, coast-downs from
//    both) of the simulated demo motor, its ADC rate scaled so the plan holds about 10k, 30k,
//    100k and 1M readings. Wall time of FitRuns (median of the repeats, min–max); peak
//    resident memory of a fit, measured in a child process (getrusage ru_maxrss after the
//    fit minus before it, with the data already loaded). Baseline in the same run: one pass
//    of the fitted model over the same runs (fit::PredictRun at the true constants), so the
//    ratio reads "the fit costs as much as N model passes".
// 2. Quick plan: one spin-up and the first 40 % of a coast-down (≤ 5k readings).
// 3. Efficiency: an ideal bench (no commutator ripple, no supply sag, no missed marks, no
//    quantisation of the ADC, Gaussian ADC noise of known σ, period tach with 1 µs timer).
//    Fisher matrix F = Σ g·gᵀ/σ² over every reading, g = ∂(model reading)/∂θ by central
//    differences of fit::PredictRun at the true θ = (R, Ke, J, Tc, b, Vb); speed-reading σ
//    from the timer quantisation, σ_ω = ω²·r/(√6·pitch). The bound √diag(F⁻¹) treats the
//    per-run nuisance parameters (switch-on time, initial speed, current offset) as known, so
//    it is optimistic and the ratios printed are upper estimates of the true ratio. Printed
//    twice: with the demo motor's inductance (the fitter's quasi-static current then leaves a
//    bias of order (L/R)/τm in R and J) and with L → 0 (the fitter's model exact).
//
//   fit_bench [repeats=5] [seeds=50] [max_samples=1000000]   or   fit_bench --quick
// (e.g. `fit_bench 3 10 100000` for a quick look). No asserts: figures only.
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <Eigen/Dense>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>
#include <vector>

#include "bench/bench_util.h"
#include "fit/fit.h"
#include "model/model.h"

namespace {

using rb::fit::RunData;
namespace model = rb::model;

constexpr double kBaseRateHz = 2000;

rb::bench::Stats Scaled(const rb::bench::Stats& s, double f) {
  return {s.median * f, s.min * f, s.max * f};
}

/// The standard plan (or the quick plan) on `bench`.
std::vector<RunData> Plan(model::BenchModel bench, std::uint64_t seed, bool quick) {
  std::vector<RunData> runs;
  std::int64_t id = 1;
  auto add = [&](model::RunKind kind, double volts, double duration, double angle) {
    model::RunScript s;
    s.kind = kind;
    s.volts = volts;
    s.duration_s = duration;
    s.rotor_angle = angle;
    bench.seed = seed * 1000 + static_cast<std::uint64_t>(id);
    auto sim = model::SimulateRun(bench, s);
    if (!sim.ok()) return;
    RunData r;
    r.id = id++;
    r.kind = sim->kind;
    r.nominal_voltage = sim->nominal_voltage;
    r.ambient_C = 20.0;
    r.samples = sim->samples;
    r.marks_per_rev = bench.instruments.tach.marks_per_rev;
    runs.push_back(std::move(r));
  };
  if (quick) {
    add(model::RunKind::kSpinUp, 6.0, 0.6, 0);
    add(model::RunKind::kCoastDown, 6.0, 20.0, 0);
    if (runs.size() == 2) runs[1].samples.resize(runs[1].samples.size() * 2 / 5);
    return runs;
  }
  const double period = 2 * rb::units::kPi / 6.0;  // ripple period of a 3-segment motor
  for (int k = 0; k < 6; ++k) add(model::RunKind::kLocked, 2.0, 0.1, (k + 0.5) * period / 6);
  for (double v : {3.0, 6.0}) add(model::RunKind::kSpinUp, v, 0.6, 0);
  for (double v : {3.0, 6.0}) add(model::RunKind::kCoastDown, v, 20.0, 0);
  return runs;
}

std::size_t Count(const std::vector<RunData>& runs) {
  std::size_t n = 0;
  for (const RunData& r : runs) n += r.samples.size();
  return n;
}

/// A summary holding the true constants, for PredictRun.
rb::fit::FitSummary Truth(const model::MotorParams& p, const std::vector<RunData>& runs) {
  rb::fit::FitSummary s;
  s.motor = "bench";
  s.model.brush_drop = true;
  for (int i = 0; i < model::kNumParams; ++i) {
    auto& r = s.params[static_cast<size_t>(i)];
    r.value = model::Get(p, i);
    r.fitted = true;
  }
  s.params[model::kL].value = 0;  // the fitter's quasi-static current
  for (const RunData& r : runs) {
    if (r.kind != model::RunKind::kLocked) continue;
    rb::fit::RunFit rf;
    rf.run_id = r.id;
    rf.kind = r.kind;
    rf.nuisance.emplace_back("R_position_ohm", p.R);  // no ripple: every position reads R
    s.runs.push_back(rf);
  }
  return s;
}

/// One model pass over all runs (the baseline).
void ModelPass(const rb::fit::FitSummary& truth, const std::vector<RunData>& runs) {
  for (const RunData& r : runs) {
    auto p = rb::fit::PredictRun(truth, r);
    if (!p.ok()) std::fprintf(stderr, "baseline: %s\n", p.status().message().c_str());
  }
}

struct Mem {
  long before_kb = 0, after_kb = 0;
};

/// Peak RSS of one fit, in a child process.
Mem MeasureMemory(const std::vector<RunData>& runs) {
  int fd[2];
  Mem m;
  if (pipe(fd) != 0) return m;
  const pid_t pid = fork();
  if (pid == 0) {
    close(fd[0]);
    rusage u{};
    getrusage(RUSAGE_SELF, &u);
    Mem c;
    c.before_kb = u.ru_maxrss;
    auto s = rb::fit::FitRuns(runs, {});
    getrusage(RUSAGE_SELF, &u);
    c.after_kb = s.ok() ? u.ru_maxrss : -1;
    if (write(fd[1], &c, sizeof c) != static_cast<ssize_t>(sizeof c)) _exit(1);
    _exit(0);
  }
  close(fd[1]);
  if (read(fd[0], &m, sizeof m) != static_cast<ssize_t>(sizeof m)) m = {};
  close(fd[0]);
  int status = 0;
  waitpid(pid, &status, 0);
  return m;
}

void SizeRows(int repeats, double max_samples, std::vector<rb::bench::Row>& rows) {
  std::printf("\n## fit time and memory vs data size (standard plan, 10 runs)\n");
  std::printf("%-10s %10s %12s %22s %14s %8s %14s\n", "target", "readings", "fit median",
              "[min, max]", "model pass", "ratio", "peak RSS +MB");
  const model::BenchModel base = model::DemoBench(1);
  const std::size_t base_n = Count(Plan(base, 1, false));
  for (double target : {10e3, 30e3, 100e3, 1e6}) {
    if (target > max_samples) continue;
    model::BenchModel bench = base;
    bench.instruments.adc_rate_hz = kBaseRateHz * target / static_cast<double>(base_n);
    const std::vector<RunData> runs = Plan(bench, 1, false);
    const rb::fit::FitSummary truth = Truth(bench.motor, runs);
    std::vector<double> t_fit, t_base;
    bool ok = true;
    for (int k = 0; k < repeats; ++k) {
      t_fit.push_back(rb::bench::TimeIt([&] { ok = ok && rb::fit::FitRuns(runs, {}).ok(); }));
      t_base.push_back(rb::bench::TimeIt([&] { ModelPass(truth, runs); }));
    }
    const auto f = rb::bench::Summarise(t_fit), b = rb::bench::Summarise(t_base);
    const Mem m = MeasureMemory(runs);
    std::printf("%-10.0f %10zu %10.1f ms %9.1f – %7.1f ms %11.1f ms %8.1f %14.1f%s\n", target,
                Count(runs), f.median * 1e3, f.min * 1e3, f.max * 1e3, b.median * 1e3,
                f.median / b.median, (m.after_kb - m.before_kb) / 1024.0, ok ? "" : "  (fit FAILED)");
    const std::string size = std::to_string(Count(runs)) + " readings, 10 runs";
    rb::bench::Row row{"fit, standard plan", size, Scaled(f, 1e3), "ms", "one model pass",
                       Scaled(b, 1e3), "", true};
    if (target == 30e3) row.target = "≤ 250 ms", row.met = f.median <= 0.25;
    rows.push_back(row);
    const double mb = (m.after_kb - m.before_kb) / 1024.0;
    rb::bench::Row mem{"fit peak memory (child process)", size, {mb, mb, mb}, "MB", "–", {}, "", true};
    if (target == 1e6) mem.target = "≤ 200 MB", mem.met = mb <= 200;
    rows.push_back(mem);
  }
  std::printf("targets (issue 9): 30k readings <= 250 ms; linear growth; <= 200 MB at 1M\n");
}

void QuickRow(int repeats, std::vector<rb::bench::Row>& rows) {
  const model::BenchModel bench = model::DemoBench(10);
  const std::vector<RunData> runs = Plan(bench, 10, true);
  const rb::fit::FitSummary truth = Truth(bench.motor, runs);
  std::vector<double> t_fit, t_base;
  for (int k = 0; k < std::max(repeats, 5); ++k) {
    t_fit.push_back(rb::bench::TimeIt([&] { (void)rb::fit::FitRuns(runs, {}); }));
    t_base.push_back(rb::bench::TimeIt([&] { ModelPass(truth, runs); }));
  }
  const auto f = rb::bench::Summarise(t_fit), b = rb::bench::Summarise(t_base);
  std::printf("\n## quick plan (spin-up + 40 %% of a coast-down): %zu readings\n", Count(runs));
  std::printf("fit median %.1f ms [%.1f – %.1f]; model pass %.2f ms; ratio %.1f; target <= 50 ms\n",
              f.median * 1e3, f.min * 1e3, f.max * 1e3, b.median * 1e3, f.median / b.median);
  rows.push_back({"fit, quick plan", std::to_string(Count(runs)) + " readings, 2 runs",
                  Scaled(f, 1e3), "ms", "one model pass", Scaled(b, 1e3), "≤ 50 ms",
                  f.median <= 0.05});
}

model::BenchModel IdealBench(std::uint64_t seed, bool no_inductance) {
  model::BenchModel b = model::DemoBench(seed);
  b.commutator.segments = 0;
  b.supply.internal_resistance_ohm = 0;
  b.instruments.tach.miss_probability = 0;
  b.instruments.current.lsb = 1e-7;
  b.instruments.voltage.lsb = 1e-7;
  b.instruments.current.offset = 0;
  if (no_inductance) b.motor.L = 1e-7;  // L/R ≈ 0: the fitter's quasi-static current is exact
  return b;
}

constexpr int kTheta = 6;
const int kThetaIndex[kTheta] = {model::kR, model::kKe, model::kJ, model::kTc, model::kB, model::kVb};

/// Cramér–Rao bound (1σ) of θ for the standard plan on the ideal bench, seed 1.
Eigen::VectorXd CramerRao(const model::BenchModel& bench) {
  const std::vector<RunData> runs = Plan(bench, 1, false);
  const double sig_i = bench.instruments.current.noise_sd, sig_v = bench.instruments.voltage.noise_sd;
  const double pitch = 2 * rb::units::kPi / bench.instruments.tach.marks_per_rev;
  const double r = bench.instruments.tach.timer_resolution_s;
  Eigen::MatrixXd F = Eigen::MatrixXd::Zero(kTheta, kTheta);
  for (const RunData& run : runs) {
    std::vector<rb::fit::RunPrediction> plus(kTheta), minus(kTheta);
    std::vector<double> h(kTheta);
    for (int a = 0; a < kTheta; ++a) {
      const int i = kThetaIndex[a];
      const double v = model::Get(bench.motor, i);
      h[static_cast<size_t>(a)] = i == model::kVb ? 1e-4 : 1e-4 * v;
      for (int sgn : {1, -1}) {
        model::MotorParams p = bench.motor;
        model::Set(&p, i, v + sgn * h[static_cast<size_t>(a)]);
        auto pr = rb::fit::PredictRun(Truth(p, runs), run);
        if (!pr.ok()) {
          std::fprintf(stderr, "Cramér–Rao: %s\n", pr.status().message().c_str());
          return Eigen::VectorXd::Constant(kTheta, NAN);
        }
        (sgn > 0 ? plus : minus)[static_cast<size_t>(a)] = std::move(*pr);
      }
    }
    for (size_t k = 0; k < run.samples.size(); ++k) {
      const model::Sample& s = run.samples[k];
      auto add = [&](auto get, double measured, double sigma) {
        if (!std::isfinite(measured) || !(sigma > 0)) return;
        Eigen::VectorXd g(kTheta);
        for (int a = 0; a < kTheta; ++a) {
          const double up = get(plus[static_cast<size_t>(a)])[k], dn = get(minus[static_cast<size_t>(a)])[k];
          if (!std::isfinite(up) || !std::isfinite(dn)) return;
          g(a) = (up - dn) / (2 * h[static_cast<size_t>(a)]);
        }
        F += g * g.transpose() / (sigma * sigma);
      };
      add([](const rb::fit::RunPrediction& p) -> const std::vector<double>& { return p.current; },
          s.current, sig_i);
      add([](const rb::fit::RunPrediction& p) -> const std::vector<double>& { return p.voltage; },
          s.voltage, sig_v);
      if (std::isfinite(s.speed) && s.speed > 0) {
        add([](const rb::fit::RunPrediction& p) -> const std::vector<double>& { return p.speed; },
            s.speed, s.speed * s.speed * r / (std::sqrt(6.0) * pitch));
      }
    }
  }
  return F.inverse().diagonal().cwiseSqrt();
}

void EfficiencyRows(int seeds, bool no_inductance, std::vector<rb::bench::Row>& rows) {
  std::printf("\n## statistical efficiency: RMS error over %d seeds / Cramér–Rao bound (ideal bench, %s)\n",
              seeds, no_inductance ? "L -> 0" : "demo motor's L = 0.35 mH");
  const model::BenchModel b1 = IdealBench(1, no_inductance);
  const Eigen::VectorXd crb = CramerRao(b1);
  Eigen::VectorXd ss = Eigen::VectorXd::Zero(kTheta), se = Eigen::VectorXd::Zero(kTheta);
  Eigen::VectorXd sum = Eigen::VectorXd::Zero(kTheta);
  int n = 0;
  for (int seed = 1; seed <= seeds; ++seed) {
    const model::BenchModel b = IdealBench(static_cast<std::uint64_t>(seed), no_inductance);
    auto s = rb::fit::FitRuns(Plan(b, static_cast<std::uint64_t>(seed), false), {});
    if (!s.ok()) {
      std::fprintf(stderr, "seed %d: %s\n", seed, s.status().message().c_str());
      continue;
    }
    for (int a = 0; a < kTheta; ++a) {
      const int i = kThetaIndex[a];
      const double e = s->params[static_cast<size_t>(i)].value - model::Get(b.motor, i);
      ss(a) += e * e;
      sum(a) += e;
      se(a) += s->params[static_cast<size_t>(i)].stderr_stat;
    }
    ++n;
  }
  std::printf("%-16s %12s %12s %12s %12s %8s %12s\n", "parameter", "true", "mean error",
              "RMS error", "CR bound", "ratio", "mean SE/CRB");
  for (int a = 0; a < kTheta; ++a) {
    const int i = kThetaIndex[a];
    const double rms = std::sqrt(ss(a) / std::max(n, 1));
    std::printf("%-16s %12.6g %12.4g %12.4g %12.4g %8.2f %12.2f\n",
                std::string(model::kParamNames[static_cast<size_t>(i)]).c_str(),
                model::Get(b1.motor, i), sum(a) / std::max(n, 1), rms, crb(a), rms / crb(a),
                se(a) / std::max(n, 1) / crb(a));
    const double ratio = rms / crb(a);
    rb::bench::Row row{std::string("RMS error / Cramér–Rao bound, ") +
                           std::string(model::kParamNames[static_cast<size_t>(i)]) +
                           (no_inductance ? " (L → 0)" : ""),
                       std::to_string(n) + " seeds, ideal bench", {ratio, ratio, ratio}, "", "–", {},
                       "", true};
    if (i == model::kR || i == model::kKe || i == model::kJ) row.target = "≤ 1.2", row.met = ratio <= 1.2;
    rows.push_back(row);
  }
  std::printf("fits: %d of %d seeds; target ratio <= 1.2 for R, Ke, J (issue 9)\n", n, seeds);
}

}  // namespace

int main(int argc, char** argv) {
  rb::fit::InitLogging(argv[0]);
  // `--quick`: a smoke run for scripts/bench --quick (3 repeats, 10 seeds, up to 100k).
  const bool quick = argc > 1 && std::string(argv[1]) == "--quick";
  const int repeats = quick ? 3 : argc > 1 ? std::max(1, std::atoi(argv[1])) : 5;
  const int seeds = quick ? 10 : argc > 2 ? std::max(2, std::atoi(argv[2])) : 50;
  const double max_samples = quick ? 1e5 : argc > 3 ? std::atof(argv[3]) : 1e6;
  rb::bench::PrintMethod("motor fit: time, memory, statistical efficiency");
  std::printf("# repeats %d, seeds %d, largest plan %.0f readings; solver threads: up to 2\n",
              repeats, seeds, max_samples);
  std::vector<rb::bench::Row> rows;
  SizeRows(repeats, max_samples, rows);
  QuickRow(repeats, rows);
  EfficiencyRows(seeds, false, rows);
  EfficiencyRows(seeds, true, rows);
  std::printf("\n");
  for (const rb::bench::Row& r : rows) rb::bench::PrintRow(r);  // the suite's table rows
  return 0;
}
