// rotorbench qa: the HTML forms of a batch summary and a sampling plan, in the report's
// look (report/html.h, report/svg_plot.h): one self-contained page, tables, histograms of
// each quantity with the specification limits drawn, the OC curve of a plan.
// A thin layer over BatchSummary / SamplingPlan; values in the spec's units.
// Pure functions; thread-safe.
#pragma once

#include <string>

#include "qa/batch.h"
#include "qa/sampling.h"

namespace rb::qa {

/// A complete HTML page for `qa batch --format html`.
std::string BatchHtml(const BatchSummary& b);

/// A complete HTML page for `qa plan --html`: the plan, its risks and the OC curve.
std::string PlanHtml(const SamplingPlan& plan);

}  // namespace rb::qa
