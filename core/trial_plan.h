#pragma once
// The trial plan: what is compared (treatment factors and levels), how
// (design kind, replicates), where (the field grid) and what is measured
// (traits), and its randomised layout.

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/design.h"
#include "core/result.h"

namespace furrow {

enum class TraitKind { decimal, count, score, category, percent, date, text };
std::optional<TraitKind> parse_trait_kind(const std::string& key);
const char* trait_kind_key(TraitKind kind);

struct Trait {
  std::string code;                 // short, unique in the trial: "HT"
  std::string name;                 // "plant height"
  std::string unit;                 // "cm"
  TraitKind kind = TraitKind::decimal;
  int decimals = 0;                 // decimal and percent: at most this many decimals
  std::optional<double> hard_min, hard_max;   // outside: refused
  std::optional<double> soft_min, soft_max;   // outside: must be confirmed
  bool required = true;
  int occasions = 1;                // repeated measurements on dates
  int scale_min = 1, scale_max = 9; // score
  std::vector<std::string> categories;        // category
};

enum class WalkOrder { serpentine_rows, serpentine_columns };

// How blocks sit in the grid: bands of whole field rows, bands of whole
// field columns, or rectangles of block_rows x block_columns plots.
enum class BlockShape { row_strips, column_strips, rectangles };

struct TreatmentFactor {
  std::string name;
  std::vector<std::string> levels;
};

struct TrialPlan {
  std::string name, site, season;
  DesignKind design = DesignKind::randomised_complete_block;
  std::vector<TreatmentFactor> factors;   // split-plot: main plot first, then sub-plot
  std::vector<std::string> sites;         // several sites: a randomised complete block trial at each
  int replicates = 1;                     // blocks (crd: replicates per treatment); per site
  int rows = 0, columns = 0;              // field grid in plots (per site)
  double plot_length_m = 0, plot_width_m = 0;
  BlockShape block_shape = BlockShape::row_strips;
  int block_rows = 0, block_columns = 0;  // rectangles only
  WalkOrder walk = WalkOrder::serpentine_rows;
  std::uint64_t seed = 0;
  std::vector<Trait> traits;
};

struct PlannedPlot {
  std::string label;        // stake label, unique in the trial
  int site = 0;             // index into TrialPlan::sites (0 for a one-site trial)
  int block = 0;            // 1-based; 0 when the design has none (crd)
  int row = 0, column = 0;  // 1-based field position
  int walk_order = 0;       // 1-based position on the crew's walk (site after site)
  std::vector<int> levels;  // level index per treatment factor
};

struct Layout {
  std::vector<PlannedPlot> plots;   // in walking order
};

// Checks the plan (names, levels, grid size against design and replicates)
// and randomises it from plan.seed. The same plan gives the same layout on
// every platform. Fails with a plain message when the plan cannot be laid
// out (grid too small or not divisible into the blocks, split-plot main plots
// that do not fit a block, Latin square not square).
Result<Layout> randomise(const TrialPlan& plan);

// Treatment combinations of the plan in a fixed order (first factor slowest).
std::vector<std::vector<int>> treatment_combinations(const TrialPlan& plan);

// "Kestrel" or "N60 x Basalt": the combination's level names joined.
std::string treatment_label(const TrialPlan& plan, const std::vector<int>& levels);

}  // namespace furrow
