#pragma once
// Helpers shared by the tests: reading reference files, comparing numbers.

#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

#include "core/analysis.h"

namespace furrow::test {

std::string reference_path(const std::string& relative);   // under tests/reference/data
std::string generated_path(const std::string& relative);   // made by a fixture at test time
std::string read_text(const std::string& path);
std::string bytes_of(const std::string& path);             // every byte of a file ("" when it cannot be read)
// A folder for this test process's files: the system's temporary folder,
// "furrow_<name>_<process id>", so that two test runs on one machine (two
// checkouts, or ctest -j) never share files. Not created or emptied here.
std::filesystem::path scratch_dir(const std::string& name);
PlotTable load_csv(const std::string& path);               // fails the test on a bad file

// Log relative error, as used for the NIST StRD (McCullough 1998): the number
// of correct significant digits of `x` against the certified `c`.
inline double lre(double x, double c) {
  if (x == c) return 16.0;
  if (c == 0) return -std::log10(std::abs(x));
  return std::min(16.0, -std::log10(std::abs(x - c) / std::abs(c)));
}

inline bool close_rel(double x, double c, double rel, double abs_floor = 0.0) {
  return std::abs(x - c) <= std::max(rel * std::abs(c), abs_floor);
}

// The Clewer & Scarisbrick (2001) wheat RCBD (tests/reference/data/field-experiments)
// and its roles: block, gen.
PlotTable clewer();
DesignRoles rcbd_roles();

// A new trial database made from the demo plan file, in a temporary folder
// (any earlier file of that name is removed first). Returns its path.
std::string fresh_demo_trial(const std::string& name);

// The demo trial with stand count and height entered for every plot from the
// demo day through the record session (plot 214 skipped as flooded, plot
// 307's height 8.3 confirmed). Returns its path.
std::string demo_day_trial(const std::string& name);

const AnovaRow& row(const Analysis& a, const std::string& source);   // fails the test when absent

}  // namespace furrow::test
