#pragma once
// Plan files: the trial plan as a CSV file of our own format, and exports of
// the layout and the data.
//
// Plan file ("furrow plan, version 1"): every line is a record whose first
// field names its kind; blank lines are skipped.
//   furrow-plan,1                               first line
//   setting,KEY,VALUE                           name, site, season, design (crd | rcbd |
//                                               latin | factorial | split-plot), replicates,
//                                               rows, columns, plot_length_m, plot_width_m,
//                                               block_shape (row-strips | column-strips |
//                                               rectangles), block_size (RxC, rectangles),
//                                               walk (serpentine-rows | serpentine-columns),
//                                               seed (0 .. 2^64-1), sites (A|B|C: design
//                                               multi-site, an RCBD randomised at each site)
//   factor,NAME,LEVEL,LEVEL,...                 a treatment factor (split-plot: main plot first)
//   trait,CODE,NAME,UNIT,KIND,DECIMALS,HARD_MIN,HARD_MAX,SOFT_MIN,SOFT_MAX,REQUIRED,OCCASIONS,CHOICES
//                                               KIND: decimal | count | score | category |
//                                               percent | date | text; limits may be empty;
//                                               REQUIRED yes | no; CHOICES: "1-9" for a score,
//                                               "a|b|c" for a category
//   plot,LABEL,[SITE,]BLOCK,ROW,COLUMN,LEVEL[,LEVEL]
//                                               optional ready layout (then no randomisation);
//                                               SITE only in several-sites plans

#include <set>
#include <string>

#include "core/trial_plan.h"
#include "storage/csv_table.h"
#include "storage/trial_store.h"

namespace furrow {

struct PlanFile {
  TrialPlan plan;
  std::optional<Layout> layout;   // present when the file lists its plots
};

// Reads and checks a plan file. Problems carry the file line and field name
// (Problem::record holds the 1-based line, Problem::column the field).
Result<PlanFile> read_plan_file(const std::string& path);
// The same for plan text already in memory.
Result<PlanFile> parse_plan_text(const std::string& text);

// The same for CSV records already split.
Result<PlanFile> plan_from_records(const CsvRecords& records);

// The layout for printing a field map and stake labels: one line per plot in
// walking order (label, block, row, column, walk order, treatment levels).
std::string layout_csv(const StoredTrial& trial);

// Data as a long table (one line per log row that is live) or a wide table
// (one line per plot, one column per trait and occasion; conflicts shown as
// "CONFLICT", missing values as empty with the reason in a _reason column).
// `revoked_devices`: rows of those devices are marked in the device_revoked column.
std::string long_data_csv(const StoredTrial& trial, const std::vector<LiveObservation>& live,
                          const std::set<std::string>& revoked_devices = {});
std::string wide_data_csv(const StoredTrial& trial, const std::vector<LiveObservation>& live);

// Quotes a CSV field when it needs it.
std::string csv_field(const std::string& s);

}  // namespace furrow
