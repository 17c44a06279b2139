#pragma once
// Rendering an Analysis for the command line: readable text tables or one
// JSON object. `lines` maps input records to file lines for outliers and
// missing cells (empty: records are numbered from 1).

#include <string>
#include <vector>

#include "core/analysis.h"

namespace furrow {

std::string analysis_text(const Analysis& a, const std::vector<int>& lines);
std::string analysis_json(const std::vector<Analysis>& analyses, const std::vector<int>& lines);

}  // namespace furrow
