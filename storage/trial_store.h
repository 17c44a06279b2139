#pragma once
// A trial database: the plan, its layout and the append-only observation log
// in one SQLite file (schema in trial_store.cpp, versioned by PRAGMA
// user_version with forward migrations).
//
// The log: every record is a new row keyed by (device id, sequence number),
// so that records from different devices never collide and merging is a
// union. An edit, an undo or a settled conflict is a new row with links to
// the rows it replaces; nothing is updated or deleted (triggers refuse it).
// A cell (plot, trait, occasion) is live-valued by the rows nobody replaced;
// two live rows that disagree are a conflict.

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/result.h"
#include "core/trial_plan.h"
#include "storage/sqlite_db.h"

namespace furrow {

inline constexpr int kSchemaVersion = 5;
// PRAGMA application_id of a bundle ("FRB1"): a trial command given a bundle says so.
inline constexpr std::int64_t kBundleApplicationIdForTrials = 0x46524231;

// Brings the schema to kSchemaVersion. A database from a newer Furrow is
// refused (its user_version is higher than ours).
Status migrate(Database& db);

struct StoredTrial {
  std::int64_t id = 0;
  TrialPlan plan;
  Layout layout;                          // plots in walking order
  std::vector<std::int64_t> plot_ids;     // parallel to layout.plots
  std::vector<std::int64_t> trait_ids;    // parallel to plan.traits
  std::string status, created_at, device_id;
  std::string uid;    // the trial's identity, shared by the station's file and every device's copy
  std::string role;   // "station" (made from the plan) or "device" (a copy of the station's)
};

struct TrialIdentity {
  std::string uid;               // empty: a new trial, new identity
  std::string role = "station";
};

// Creates a new trial database file (which must not exist) holding the plan
// and its layout. On failure the file is removed again. A device's copy of
// a station's trial passes the station's uid and the role "device".
Status create_trial_database(const std::string& path, const TrialPlan& plan, const Layout& layout,
                             const TrialIdentity& identity = {});

// Opens an existing trial database (migrating it) and reads its trial.
struct OpenTrial {
  Database db;
  StoredTrial trial;
};
// Access::read_only (for commands that only read: show, export, report,
// analyse, list) never writes to the file: no upgrade, no WAL switch, no
// tables added; a file of an older schema is upgraded in a copy in memory.
enum class Access { write, read_only };
Result<OpenTrial> open_trial_database(const std::string& path, Access access = Access::write);

// Marks the trial closed (collection over; reports drop the interim
// caution). Closing a closed trial is refused.
Status close_trial(Database& db);

// The missing reason of an undone entry: the cell counts as not recorded.
inline constexpr const char* kWithdrawnReason = "withdrawn";

struct ObservationKey {
  std::string device_id;
  std::int64_t sequence = 0;
};

// Lengths a row's free text may have (ours; far above what a crew types).
// Entry, settlement and merge apply the same limits, so that no row a device
// saves is one its station refuses.
inline constexpr size_t kMaxNoteBytes = 2000, kMaxNameBytes = 200, kMaxReasonBytes = 200;
// Whether text holds a control character (a NUL, an escape, a bell...);
// notes may hold line breaks and tabs.
bool has_control_character(const std::string& text, bool line_breaks_allowed = false);

struct NewObservation {
  std::int64_t plot_id = 0, trait_id = 0;
  int occasion = 1;
  std::optional<std::string> value;          // normalised text
  std::optional<double> number;              // numeric value when the trait has one
  std::optional<std::string> missing_reason; // instead of a value: damaged, flooded, withdrawn, ...
  std::string note, observer;
  std::string confirmed_checks;              // checks the crew answered "the value is right" (keys, comma-separated)
  std::vector<ObservationKey> replaces;      // rows this one supersedes
};

// Appends observations, each in its own transaction, committed durably (WAL,
// synchronous=FULL); holds its prepared statements so that a day of entries
// costs one commit each and little more. The device's next sequence number
// is one past its highest in the log, read inside the write transaction.
// Not thread-safe; the Database must outlive the writer.
class ObservationWriter {
 public:
  explicit ObservationWriter(Database& db) : db_(db) {}
  // Returns the new row's key once its commit has returned.
  Result<ObservationKey> append(const std::string& device_id, const NewObservation& o, const std::string& recorded_at);

 private:
  Database& db_;
  std::optional<Statement> next_sequence_, insert_, replace_;
};

// One-off append (prepares its statements each time).
Result<ObservationKey> append_observation(Database& db, const std::string& device_id, const NewObservation& o,
                                          const std::string& recorded_at);

struct LiveObservation {
  ObservationKey key;
  std::int64_t plot_id = 0, trait_id = 0;
  int occasion = 1;
  std::optional<std::string> value;
  std::optional<double> number;
  std::optional<std::string> missing_reason;
  std::string note, observer, recorded_at;
  std::string confirmed_checks;   // checks the crew answered "the value is right" (keys, comma-separated)
};

// What two live rows of one cell must share to agree: the number for a
// numeric trait (5.5 and 5.50, 6 and 6.0 agree), else the text exactly, or the
// reason there is no value. Two live rows with different identities are a
// conflict. (The views current_value and conflict compare the same way.)
std::string value_identity(const LiveObservation& row);

// Rows nobody replaced, for one trait (all traits when trait_id is 0),
// ordered by recorded time then key.
Result<std::vector<LiveObservation>> live_observations(Database& db, std::int64_t trait_id);

// The rows that `key` replaced (empty when it replaced none).
Result<std::vector<LiveObservation>> replaced_by(Database& db, const ObservationKey& key);

// Every row of the log in key order (for exports and audits).
Result<std::vector<LiveObservation>> all_observations(Database& db);

// This device's choice of what it records today (kept in the trial file,
// never bundled). Empty `trait_codes`: no choice saved yet.
struct WalkChoice {
  std::vector<std::string> trait_codes;   // in the order they are walked
  int occasion = 1;
  std::vector<int> blocks;                // empty: every block
  bool every_trait_per_plot = false;      // all chosen traits on a plot before the next plot
};
Result<WalkChoice> load_walk_choice(Database& db);
Status save_walk_choice(Database& db, const WalkChoice& choice);

// Whether `key` is among the comma-separated `checks`.
bool has_check(const std::string& checks, const std::string& key);

// Current time as ISO 8601 UTC with milliseconds.
std::string utc_now();

}  // namespace furrow
