#pragma once
// What the Trials screen shows about each trial database: name, design,
// plots, how much of the required data is collected, when it last changed.

#include <string>
#include <vector>

#include "storage/trial_store.h"

namespace furrow {

struct TrialProgress {
  int cells_done = 0, cells_required = 0;   // plot x required trait x occasion
  std::string last_change;                  // newest log row's time, else the trial's creation time
  double percent() const { return cells_required ? 100.0 * cells_done / cells_required : 100.0; }
};

// A cell counts as collected when it holds a live value or a reason why it
// has none (a withdrawn entry does not count).
TrialProgress trial_progress(const StoredTrial& trial, const std::vector<LiveObservation>& live);

struct TrialSummary {
  std::string path, file_name;
  std::string name, design, site, season, uid;
  int plots = 0, traits = 0;
  TrialProgress progress;
  std::string problem;   // set when the file could not be read; the rest is empty then
};

// Reads one trial database for the list.
TrialSummary summarise_trial(const std::string& path);

// The trial database files (*.furrow) in `folder`, by name.
std::vector<std::string> list_trial_files(const std::string& folder);

// Every trial database (*.furrow) in `folder`, and every trial opened from
// elsewhere that the folder remembers (and that still exists), newest change
// first; files that cannot be read are listed with their problem.
std::vector<TrialSummary> list_trials(const std::string& folder);

// Trials opened from outside the data folder stay listed: their paths are
// kept in `folder`/known_trials.txt (one absolute path a line). A path inside
// the folder, or one already known, is not added again.
Status remember_trial(const std::string& folder, const std::string& path);
std::vector<std::string> known_trials(const std::string& folder);

// Removes a trial from this device's list without deleting anything: a file
// in the data folder is moved (with its -wal and -shm files) into
// `folder`/trash as "NAME (removed YYYY-MM-DD HH-MM-SS).furrow"; a trial from
// elsewhere is only forgotten. Returns where the file went (or its path,
// when forgotten).
Result<std::string> remove_trial(const std::string& folder, const std::string& path);

// The trials in `trials` with the same name as the plan file's trial (a
// second "Create" from the same plan asks first). Empty when the plan cannot
// be read (creating it then reports the problem).
std::vector<TrialSummary> trials_named_like_plan(const std::vector<TrialSummary>& trials, const std::string& plan_path);

// Plan files (*.csv starting with the plan header) in `folder`, by name.
std::vector<std::string> list_plan_files(const std::string& folder);

// Reads a plan file, lays it out (its own layout or a randomised one) and
// creates the trial database `db_path` (which must not exist). The Problem's
// message names the file, line and field ("plan.csv:12: field 'rows': ...").
// Nothing is created on failure. Returns a one-line description on success.
Result<std::string> create_trial_from_plan(const std::string& plan_path, const std::string& db_path);

// Where a plan file's trial (or a copy of a station's trial file) goes in
// `folder`: its file name with ".furrow" in place of ".plan.csv", ".csv" or
// ".furrow"; " (2)", " (3)", ... when taken.
std::string trial_path_for_plan(const std::string& plan_path, const std::string& folder);

}  // namespace furrow
