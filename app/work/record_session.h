#pragma once
// The state behind the Record screen, apart from any drawing: one plot at a
// time in the trial's walking order, every entry checked and committed
// before it counts as saved. Screens read `view()` and change the session
// only through its commands; tests drive the same commands headlessly.
//
// Two walks, as crews work (FIELD-PRACTICE.md): one trait across every plot,
// or every trait at each plot before moving on.

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "app/work/before_leaving.h"
#include "app/work/trial_summary.h"
#include "core/entry_checks.h"
#include "storage/trial_store.h"

namespace furrow {

enum class WalkMode { one_trait_across_plots, all_traits_per_plot };

// Reasons a crew gives for skipping a plot (our own short list).
inline const std::vector<std::string> kSkipReasons = {"plot damaged", "plants missing", "flooded", "not emerged",
                                                      "other"};

struct EntryOutcome {
  enum class Kind { saved, needs_confirmation, refused } kind = Kind::refused;
  std::vector<Finding> findings;
  std::string message;   // plain words for the banner
};

struct RecordView {
  std::string plot_label;
  std::string site;
  int block = 0, row = 0, column = 0;
  std::string treatment;          // "hidden" when scoring blind
  std::string trait_code, trait_name, unit, limits;
  int occasion = 1;
  std::optional<std::string> current;   // the cell's live value (or "missing: reason"; "CONFLICT")
  int position = 0, plots = 0;          // 1-based position in the walk
  int cells_done = 0, cells_required = 0;
  bool has_pending = false;             // a value waits for confirmation
};

class RecordSession {
 public:
  // Opens a trial database; `observer` is recorded with every entry.
  static Result<RecordSession> open(const std::string& db_path, const std::string& observer);

  RecordView view() const;
  // The Before leaving list from the session's current log.
  BeforeLeaving before_leaving(double alpha) const;
  const StoredTrial& trial() const { return open_.trial; }
  // The live rows of every trait as this session knows them.
  const std::vector<LiveObservation>& live() const { return live_; }
  // Grows whenever the live rows change (screens keep derived views until then).
  std::uint64_t revision() const { return revision_; }
  size_t trait_index() const { return trait_; }
  int occasion() const { return occasion_; }
  // Reads the log again (after another program, e.g. a merge, changed it).
  Status refresh() { return reload(); }

  // Commands.
  EntryOutcome enter(const std::string& text);   // check, then save or ask
  // A note saved with the next value or skip (then cleared).
  void set_pending_note(const std::string& note) { note_ = note; }
  EntryOutcome confirm();                        // save the pending value
  Status skip(const std::string& reason, const std::string& note);   // reason from kSkipReasons
  // No value for the current cell, with any reason in the crew's words.
  Status record_missing(const std::string& reason, const std::string& note);
  Status add_note(const std::string& note);      // a note on the plot (saved with the cell)
  Status undo();                                 // withdraw this device's last entry (a new log row)
  void next();
  void previous();
  Status jump_to(const std::string& label);
  void set_trait(size_t index);
  Status set_trait(const std::string& code);
  Status set_occasion(int occasion);   // 1..the trait's occasions
  void set_walk(WalkMode mode) { walk_ = mode; }
  void set_blind(bool blind) { blind_ = blind; }
  // Who is measuring from now on. Precondition: not empty.
  void set_observer(const std::string& observer) { observer_ = observer; }

  RecordSession(RecordSession&&) = default;

 private:
  explicit RecordSession(OpenTrial open) : open_(std::move(open)) {}
  Status reload();
  std::vector<ObservationKey> own_live_keys(std::int64_t plot_id, std::int64_t trait_id, int occasion) const;
  Result<ObservationKey> save(NewObservation o);
  EntryOutcome confirm_value(const std::string& text);   // parse and save, then move on
  void remember(std::int64_t plot_id, std::int64_t trait_id, int occasion);

  OpenTrial open_;
  std::string observer_;
  std::vector<LiveObservation> live_;   // cached live rows, refreshed after each save
  std::uint64_t revision_ = 0;
  mutable std::optional<std::pair<std::uint64_t, TrialProgress>> progress_;   // at revision_
  size_t plot_ = 0, trait_ = 0;
  int occasion_ = 1;
  WalkMode walk_ = WalkMode::one_trait_across_plots;
  bool blind_ = false;
  std::optional<std::string> pending_;
  std::string note_;
  // This session's entries, newest last, with the cell's state before each:
  // undo writes that state back as a new row (or "withdrawn" if there was none).
  struct UndoStep {
    std::int64_t plot_id = 0, trait_id = 0;
    int occasion = 1;
    std::optional<LiveObservation> before;
  };
  std::vector<UndoStep> undo_;
};

}  // namespace furrow
