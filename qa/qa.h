// rotorbench qa: batch acceptance of incoming motors — start here.
//
// Specs with tolerances (spec.h), uncertainty-aware verdicts per motor after ISO 14253-1
// (check.h), batch statistics with Cpk and outliers (batch.h, stats.h), single sampling
// plans by attributes (sampling.h), and their printed forms (format.h, html.h).
// Reads fits (fit/fit.h) and motors (storage/storage.h); writes nothing.
// SI inside; the spec's trade units only in printed forms. Thread-safety: pure functions
// except those taking a storage::Database, which use it from one thread.
#pragma once

#include "qa/batch.h"
#include "qa/check.h"
#include "qa/format.h"
#include "qa/sampling.h"
#include "qa/spec.h"
#include "qa/stats.h"
