#pragma once
// Rendering an Analysis for the command line: readable text tables or one
// JSON object. Records (outliers, missing cells) are named through
// RecordNames: file lines for a CSV file, plot labels for a trial database.

#include <string>
#include <vector>

#include "core/analysis.h"
#include "core/mixed_analysis.h"

namespace furrow {

struct RecordNames {
  std::string word = "line";          // "line" (a number in JSON) or "plot" (a label)
  std::vector<std::string> names;     // per record
  std::string name(int record) const {
    return record >= 0 && record < static_cast<int>(names.size()) ? names[record] : std::to_string(record + 1);
  }
};

std::string analysis_text(const Analysis& a, const RecordNames& records);
std::string analysis_json(const std::vector<Analysis>& analyses, const RecordNames& records);

// The REML analysis (--method reml). JSON fields: README, "REML output".
std::string reml_text(const MixedAnalysis& a);
std::string reml_json(const std::vector<MixedAnalysis>& analyses);

}  // namespace furrow
