#pragma once
// The report for the office: one self-contained HTML file (inline CSS and
// SVG, no scripts, no network) with the trial's plan and layout,
// completeness, every numeric trait's analysis of variance, means, CV,
// LSD/HSD with letters, variance components and outlier plots, and the field
// map coloured by a chosen trait. While the trial is not closed the report
// carries the interim caution.
//
// Every number of an analysis table also sits, unrounded, in the cell's
// data-value attribute (%.17g), so that a check can compare the report with
// the engine exactly.

#include <string>

#include "core/result.h"

namespace furrow {

struct ReportOptions {
  std::string map_trait;      // trait code for the map's colours; empty: the first numeric trait
  double alpha = 0.05;
};

// Writes the report of the trial database `db_path` to `out_path`.
Status write_report(const std::string& db_path, const std::string& out_path, const ReportOptions& options);

// The report as text (for tests and the app).
Result<std::string> report_html(const std::string& db_path, const ReportOptions& options);

}  // namespace furrow
