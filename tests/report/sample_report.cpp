// Writes a report of simulated data (two fits overlaid, ten runs) for the browser check:
//   rb_sample_report OUT.html   → also OUT.html.figures, one plot id per line.
#include <cstdio>
#include <fstream>

#include "tests/report/report_fixture.h"

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: rb_sample_report OUT.html\n");
    return 2;
  }
  const rb::report::ReportInput in =
      rb::testing::SimulatedReportInput(rb::testing::TenRunPlan(), /*rewound=*/true);
  rb::Result<rb::report::ReportSummary> rep = rb::report::BuildReport(in);
  if (!rep.ok()) {
    std::fprintf(stderr, "rb_sample_report: %s\n", rep.status().message().c_str());
    return 1;
  }
  std::ofstream(argv[1], std::ios::binary) << rep->html;
  std::ofstream ids(std::string(argv[1]) + ".figures");
  for (const std::string& id : rep->figure_ids) ids << id << "\n";
  std::printf("%s: %zu bytes, %zu plots\n", argv[1], rep->html.size(), rep->figure_ids.size());
  return 0;
}
