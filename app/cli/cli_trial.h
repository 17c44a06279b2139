#pragma once
// Trial subcommands: `trial new`, `trial show`, `record`, `export`, and the
// database form of `analyze`. Exit codes: 0 done; 2 bad input (nothing
// saved or changed); 3 the value needs confirmation (nothing saved).

#include <optional>
#include <string>
#include <vector>

namespace furrow {

inline constexpr int kExitNeedsConfirmation = 3;

int run_trial_new(const std::string& plan_path, const std::string& db_path);
int run_trial_show(const std::string& db_path);

struct RecordRequest {
  std::string db, plot, trait, value, observer, note, missing;
  int occasion = 1;
  bool confirm = false;
  // A typed-back field sheet instead of one value (app/work/sheet_entry.h).
  std::string from_sheet;
  std::vector<std::string> confirm_cells;   // "LINE" or "LINE:COLUMN": saved as written if asked
  bool ask = false;                          // ask on standard input even when it is not a terminal
};
// One value, or a sheet: exit 0 all saved (or already saved); 2 something
// refused; 3 something waits for confirmation (and nothing was refused).
int run_record(const RecordRequest& r);

// `furrow walk`: with no traits, prints today's walk and its progress; with
// traits, saves the walk in the trial file (this device's choice, never
// bundled) first.
struct WalkRequest {
  std::string db;
  std::vector<std::string> traits;
  std::vector<int> blocks;
  int occasion = 1;
  bool every_trait_per_plot = false;
};
int run_walk(const WalkRequest& r);

// kind: "long", "wide" or "layout"; out empty: stdout.
int run_export(const std::string& db_path, const std::string& kind, const std::string& out);

// `labels`: the trial's stake labels as a PDF (app/print/stake_labels.h).
int run_labels(const std::string& db_path, const std::string& out, const std::string& sheet, bool blind);

// `sheets`: the walk as a printable field sheet (app/print/field_sheet.h),
// and with `csv_out` the blank CSV to type it back into.
struct SheetsRequest {
  std::string db, out, csv_out, paper = "a4";
  std::vector<std::string> traits;   // default: every trait
  int occasion = 1;
  bool blind = false;
};
int run_sheets(const SheetsRequest& r);

int run_analyze_db(const std::string& db_path, const std::string& trait_code, int occasion, bool json,
                   double alpha, const std::string& sums, bool without_interaction = false,
                   const std::string& method = "anova", const std::string& field_trend = "off");

}  // namespace furrow
