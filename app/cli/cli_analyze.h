#pragma once
// `furrow analyze`: the interim analysis of a CSV file from the command line.

#include <string>
#include <vector>

#include "core/analysis.h"

namespace furrow {

struct AnalyzeRequest {
  std::string csv_path;
  std::string design;
  std::vector<std::string> responses;
  std::vector<std::string> treatments;
  std::string block, row, column, main_plot, sub_plot, site;
  bool sites_random = false;
  bool treatments_random = false;
  bool without_interaction = false;
  double alpha = 0.05;
  std::string sums = "partial";
  std::string outliers = "threshold";
  bool json = false;
  std::string method = "anova";        // anova | reml
  std::string field_trend = "off";     // off | test | always (reml)
  std::string row_position, column_position;
  std::string straight_trend;          // rows | columns | both (reml)
};

// Runs the request, writing results to stdout and problems to stderr in the
// form "FILE:LINE: column 'C': message". Returns the process exit code:
// 0 done, 2 bad input.
int run_analyze(const AnalyzeRequest& request);

}  // namespace furrow
