// HTML pages for batches and sampling plans, built from the report's page and plot parts.
#include "qa/html.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "qa/format.h"
#include "report/html.h"
#include "report/svg_plot.h"

namespace rb::qa {
namespace {

using report::EscapeHtml;

std::string VerdictCell(Verdict v, const std::string& text_html) {
  const char* cls = v == Verdict::kPass ? "pass" : v == Verdict::kFail ? "fail" : "open";
  return fmt::format("<span class=\"qa-{}\">{}</span>", cls, text_html);
}

std::string Upper(std::string s) {
  for (char& ch : s) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
  return s;
}

// Histogram of one quantity with its limits (and nominal) drawn.
std::string QuantityFigure(const QuantityStats& s, int index) {
  const Limit& l = s.limit;
  std::vector<double> v;
  for (double x : s.values) v.push_back(l.ToUnit(x));
  if (v.empty()) return "";
  double lo = *std::min_element(v.begin(), v.end());
  double hi = *std::max_element(v.begin(), v.end());
  if (l.lower) lo = std::min(lo, l.ToUnit(*l.lower));
  if (l.upper) hi = std::max(hi, l.ToUnit(*l.upper));
  const double span = hi > lo ? hi - lo : std::max(1e-9, std::fabs(hi) * 0.1);
  lo -= 0.08 * span;
  hi += 0.08 * span;
  // Bins: about √n, at least 8 across the drawn range so the limits stand out.
  const int bins = std::max(8, static_cast<int>(std::ceil(std::sqrt(v.size()) * 2)));
  report::Figure f;
  f.id = fmt::format("qa-hist-{}", index);
  f.title = l.Label();
  f.width = 640;
  f.height = 260;
  f.x.title = fmt::format("{} [{}]", l.Label(), l.unit);
  f.x.min = lo;
  f.x.max = hi;
  report::Panel p;
  p.y.title = "motors";
  p.y.include_zero = true;
  p.series.push_back(report::HistogramSeries(v, lo, hi, bins, "motors", report::SeriesColour(0)));
  if (l.lower) {
    p.lines.push_back({true, l.ToUnit(*l.lower), fmt::format("LSL {:g}", l.ToUnit(*l.lower)),
                       report::kColourLimit, false, false});
  }
  if (l.upper) {
    p.lines.push_back({true, l.ToUnit(*l.upper), fmt::format("USL {:g}", l.ToUnit(*l.upper)),
                       report::kColourLimit, false, false});
  }
  if (l.nominal) {
    p.lines.push_back({true, l.ToUnit(*l.nominal), "nominal", report::kColourGuide, true, false});
  }
  f.panels.push_back(std::move(p));
  return report::RenderSvg(f);
}

}  // namespace

std::string BatchHtml(const BatchSummary& b) {
  const bool gb = b.options.check.rule == DecisionRule::kGuardBand;
  std::string body;
  body += fmt::format("<h1>Batch {} — {}</h1>\n", EscapeHtml(b.batch), EscapeHtml(b.spec_name));
  body += fmt::format("<p><strong>Batch verdict: {}</strong> — {}.</p>\n",
                      VerdictCell(b.verdict, Upper(VerdictName(b.verdict))),
                      EscapeHtml(b.verdict_text));
  body += fmt::format(
      "<p>{} motors checked ({} pass, {} fail, {} inconclusive{}). Decision rule: {} with "
      "expanded uncertainty U = {:g}·u{}.</p>\n",
      b.motors.size(), b.pass, b.fail, b.inconclusive,
      b.unmeasured.empty() ? "" : fmt::format(", {} not measured", b.unmeasured.size()),
      RuleName(b.options.check.rule), b.options.check.coverage_factor,
      gb ? " (pass = conformance proven, fail = non-conformance proven, inconclusive = the "
           "interval straddles a limit)"
         : " (simple: inside the limits passes)");

  body += "<h2>Motors</h2>\n";
  std::vector<std::string> head = {"motor", "verdict"};
  std::vector<size_t> numeric;
  for (const QuantityStats& s : b.stats) {
    numeric.push_back(head.size());
    head.push_back(fmt::format("{} [{}]", EscapeHtml(s.limit.Label()), EscapeHtml(s.limit.unit)));
  }
  report::HtmlTable motors(head, numeric);
  for (size_t m = 0; m < b.motors.size(); ++m) {
    const MotorCheck& mc = b.motors[m];
    std::vector<std::string> row = {EscapeHtml(mc.motor),
                                    VerdictCell(mc.overall, VerdictName(mc.overall))};
    for (const QuantityStats& s : b.stats) {
      const QuantityCheck* q = mc.Find(s.limit.quantity, s.limit.voltage);
      if (!q || !q->measured.available) {
        row.push_back("–");
        continue;
      }
      std::string cell = EscapeHtml(
          FormatValueU(s.limit.ToUnit(q->measured.value), s.limit.ToUnit(q->expanded_u)));
      if (s.IsOutlier(static_cast<int>(m))) cell += " <abbr title=\"outlier\">*</abbr>";
      row.push_back(VerdictCell(q->verdict, cell));
    }
    motors.Row(row);
  }
  for (const std::string& u : b.unmeasured) {
    motors.Row({EscapeHtml(u.substr(0, u.find(':'))), "not measured"});
  }
  body += motors.Render();
  body += "<p class=\"note\">Values are measured ± U. * marks an outlier (" +
          EscapeHtml(b.outlier_test) + ").</p>\n";

  body += "<h2>Statistics</h2>\n";
  report::HtmlTable stats(
      {"quantity", "limits", "n", "mean", "sd", "min", "max",
       fmt::format("Cpk [{:g} % CI]", b.options.confidence * 100), "pass / fail / open"},
      {2, 3, 4, 5, 6, 7});
  for (const QuantityStats& s : b.stats) {
    const Limit& l = s.limit;
    const auto u = [&](double v) { return fmt::format("{:.5g}", l.ToUnit(v)); };
    const bool has = s.describe.n > 0;
    stats.Row({EscapeHtml(fmt::format("{} [{}]", l.Label(), l.unit)), EscapeHtml(FormatLimits(l)),
               std::to_string(s.describe.n), has ? u(s.describe.mean) : "–",
               s.describe.n > 1 ? u(s.describe.sd) : "–", has ? u(s.describe.min) : "–",
               has ? u(s.describe.max) : "–",
               s.cpk.available
                   ? fmt::format("{:.2f} [{:.2f}, {:.2f}]", s.cpk.cpk, s.cpk.lower, s.cpk.upper)
                   : "–",
               fmt::format("{} / {} / {}", s.pass, s.fail, s.inconclusive + s.not_measured)});
  }
  body += stats.Render();
  std::vector<std::string> notes;
  for (const QuantityStats& s : b.stats) {
    if (s.cpk.small_sample) {
      notes.push_back(fmt::format(
          "Small sample (n = {} &lt; {}): every Cpk here is a rough guide; read its interval.",
          s.describe.n, b.options.small_n));
    } else if (!s.cpk.note.empty()) {
      notes.push_back(EscapeHtml(s.limit.Label() + ": " + s.cpk.note));
    }
  }
  std::sort(notes.begin(), notes.end());
  notes.erase(std::unique(notes.begin(), notes.end()), notes.end());
  notes.push_back(
      "Cpk is normal-theory, with Bissell's approximate interval; the spread includes the "
      "measurement uncertainty.");
  body += "<ul class=\"note\">\n";
  for (const std::string& n : notes) body += "<li>" + n + "</li>\n";
  body += "</ul>\n";

  body += "<h2>Distributions</h2>\n";
  for (size_t i = 0; i < b.stats.size(); ++i) {
    const std::string svg = QuantityFigure(b.stats[i], static_cast<int>(i));
    if (svg.empty()) continue;
    body += report::FigureHtml(
        svg, EscapeHtml(fmt::format("{}: {} motors; limits in red.", b.stats[i].limit.Label(),
                                    b.stats[i].describe.n)));
  }
  if (b.verdict == Verdict::kInconclusive) {
    body += "<p class=\"note\">" + EscapeHtml(kBenchCaution) + "</p>\n";
  }
  body +=
      "<style>.qa-pass{color:#1a7f37}.qa-fail{color:#b2182b;font-weight:600}"
      ".qa-open{color:#9a6700}</style>\n";
  return report::HtmlPage(fmt::format("Batch {} — {}", b.batch, b.spec_name), body);
}

std::string PlanHtml(const SamplingPlan& p) {
  const PlanOptions& o = p.options;
  std::string body = fmt::format(
      "<h1>Sampling plan for a lot of {}</h1>\n<p><strong>Inspect n = {} motors; accept the "
      "lot with at most c = {} defective, reject with {} or more.</strong></p>\n",
      o.lot, p.n, p.c, p.c + 1);
  report::HtmlTable risks({"", "fraction defective", "P(accept)", "risk", "allowed"}, {1, 2, 3, 4});
  risks.Row({"producer (AQL)", fmt::format("{:g} %", o.aql * 100), fmt::format("{:.4f}", p.pa_aql),
             fmt::format("{:.4f}", 1 - p.pa_aql), fmt::format("{:g}", o.alpha)});
  risks.Row({"consumer (LTPD)", fmt::format("{:g} %", o.ltpd * 100),
             fmt::format("{:.4f}", p.pa_ltpd), fmt::format("{:.4f}", p.pa_ltpd),
             fmt::format("{:g}", o.beta)});
  body += risks.Render();
  body += fmt::format("<p>Operating characteristic: {} (the sample is {} {:g} % of the lot).</p>\n",
                      OcModelName(p.model), p.model == OcModel::kBinomial ? "at most" : "over",
                      o.small_lot_fraction * 100);
  report::Figure f;
  f.id = "qa-oc";
  f.title = fmt::format("OC curve, n = {}, c = {}", p.n, p.c);
  f.x.title = "lot fraction defective [%]";
  f.x.min = 0;
  report::Panel panel;
  panel.y.title = "probability of acceptance";
  panel.y.min = 0;
  panel.y.max = 1;
  report::Series oc;
  oc.label = "Pa(p)";
  for (const OcPoint& pt : p.oc) {
    oc.x.push_back(pt.p * 100);
    oc.y.push_back(pt.pa);
  }
  panel.series.push_back(std::move(oc));
  panel.markers.push_back({o.aql * 100, p.pa_aql, "", 'o', "AQL", ""});
  panel.markers.push_back({o.ltpd * 100, p.pa_ltpd, "", 's', "LTPD", ""});
  panel.lines.push_back({false, 1 - o.alpha, fmt::format("1 − α = {:g}", 1 - o.alpha),
                         report::kColourGuide, true, false});
  panel.lines.push_back(
      {false, o.beta, fmt::format("β = {:g}", o.beta), report::kColourGuide, true, false});
  f.panels.push_back(std::move(panel));
  body += report::FigureHtml(report::RenderSvg(f),
                             "Probability of accepting a lot against its fraction defective.");
  report::HtmlTable t({"defective %", "P(accept)"}, {0, 1});
  for (const OcPoint& pt : p.oc) {
    t.Row({fmt::format("{:.3g}", pt.p * 100), fmt::format("{:.4f}", pt.pa)});
  }
  body += t.Render();
  return report::HtmlPage(fmt::format("Sampling plan, lot {}", o.lot), body);
}

}  // namespace rb::qa
