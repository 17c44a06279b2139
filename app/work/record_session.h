#pragma once
// The state behind the Record screen, apart from any drawing: one plot at a
// time along today's walk, every entry checked and committed before it counts
// as saved. Screens read `view()` and change the session only through its
// commands; `furrow record` and the tests drive the same commands.
//
// The one owner of "the value being entered". Its rules (numbered; the code
// and the randomised tap test refer to them):
//   E1. Typed text belongs to one cell (plot, trait, occasion). Any command
//       that leaves the cell (next, previous, jump, another trait or
//       occasion, undo, skip, a changed walk, leaving the screen through
//       `drop_entry`) saves nothing and clears it; the view's `notice` then
//       says what was dropped.
//   E2. A value waiting for confirmation is exactly the typed text of this
//       cell. Typing or erasing a character, or leaving the cell, withdraws
//       the question; Confirm is offered only while the text on screen is the
//       text the checks asked about.
//   E3. Confirm saves exactly the typed text, checked again at that moment
//       (a refusal still refuses). The saved row records that the crew
//       confirmed it (`confirmed_checks`: the checks it answered, data in
//       the log).
//   E4. A likely decimal slip offers its suggested value; taking it puts the
//       suggestion in place of the typed text and saves it through every
//       check, like any entry.
//
// Today's walk (what this device records today: traits, occasion, blocks,
// and one trait across the plots or every trait per plot) is kept in the
// trial file and comes back when the trial is opened again.

#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "app/work/before_leaving.h"
#include "app/work/trial_summary.h"
#include "app/work/walk.h"
#include "core/entry_checks.h"
#include "storage/trial_store.h"

namespace furrow {

// Reasons a crew gives for skipping a plot (our own short list). "other"
// needs a note saying why.
inline const std::vector<std::string> kSkipReasons = {"plot damaged", "plants missing", "flooded", "not emerged",
                                                      "other"};

struct EntryOutcome {
  enum class Kind { saved, needs_confirmation, refused } kind = Kind::refused;
  std::vector<Finding> findings;   // every check result, most useful first
  std::string message;             // plain words for the banner: what happened, then every finding
};

struct RecordView {
  std::string plot_label;
  std::string site;
  int block = 0, row = 0, column = 0;
  std::string treatment;          // "hidden" when scoring blind
  std::string trait_code, trait_name, unit, limits;
  int occasion = 1, occasions = 1;
  std::optional<std::string> current;   // the cell's live value (or "missing: reason"; "CONFLICT")
  std::string note;                     // the cell's note, if any
  // The value being entered (rules E1-E4).
  std::string typed;
  bool has_pending = false;             // Confirm is offered for `typed`
  std::string suggestion;               // a likely slip's value ("Save 91 instead"), else empty
  std::string notice;                   // what the last command dropped or changed, else empty
  std::string pending_note;             // a note waiting for this cell's value or skip
  // Today's walk.
  bool in_walk = true;                  // this plot and trait are part of the walk
  int walk_position = 0, walk_plots = 0;   // 1-based place among the walk's plots
  int trait_done = 0, trait_total = 0;  // this trait's cells of the walk: done of all
  int walk_done = 0, walk_total = 0;    // every cell of the walk
  std::string walk_summary;             // "Height, Stand count; occasion 1; blocks 1-2; one trait at a time"
  bool walk_complete = false;
};

class RecordSession {
 public:
  // Opens a trial database; `observer` is recorded with every entry. Starts
  // at the first cell of the saved walk (or a walk of the first trait on
  // every plot) that has no value yet.
  static Result<RecordSession> open(const std::string& db_path, const std::string& observer);

  RecordView view() const;
  // The Before leaving list against today's walk.
  BeforeLeaving before_leaving(double alpha) const;
  const StoredTrial& trial() const { return open_.trial; }
  // The live rows of every trait as this session knows them.
  const std::vector<LiveObservation>& live() const { return live_; }
  // Grows whenever the live rows change (screens keep derived views until then).
  std::uint64_t revision() const { return revision_; }
  size_t trait_index() const { return trait_; }
  size_t plot_index() const { return plot_; }
  int occasion() const { return occasion_; }
  const Walk& walk() const { return walk_; }
  // Reads the log again if another program (a merge, a settlement) changed
  // the file since the last read; cheap when nothing changed (PRAGMA
  // data_version). Returns true when the live rows were reloaded.
  Result<bool> refresh_if_changed();
  // Reads the log again unconditionally.
  Status refresh() { return reload(); }

  // The value being entered (E1-E4).
  void type(const std::string& keys);   // appends the keys to the typed text
  void erase();                          // removes the last typed character
  EntryOutcome save();                   // checks the typed text: saves, asks, or refuses
  EntryOutcome confirm();                // E3
  EntryOutcome save_suggestion();        // E4
  // Replaces the typed text with `text` and saves it (the command line).
  EntryOutcome enter(const std::string& text);
  // E1 for a caller leaving the screen: clears the typed text and any question.
  void drop_entry();

  // A note saved with the next value or skip of this cell (then cleared).
  void set_pending_note(const std::string& note) { note_ = note; }
  Status skip(const std::string& reason, const std::string& note);   // reason from kSkipReasons
  // No value for the current cell, with any reason in the crew's words.
  Status record_missing(const std::string& reason, const std::string& note);
  // A note on the current cell: saved with its live value when it has one,
  // else kept for the next value or skip of the cell.
  Status add_note(const std::string& note);
  // "The value is right": the cell's one saved value, saved again with
  // `check` (e.g. "outlier") among its confirmed checks, so that Before
  // leaving stops asking. Refused when the cell has no single saved value.
  Status confirm_saved(const std::string& check);
  Status undo();                                 // withdraw this device's last entry (a new log row)
  void next();
  void previous();
  Status jump_to(const std::string& label);
  void set_trait(size_t index);
  Status set_trait(const std::string& code);
  Status set_occasion(int occasion);   // 1..the trait's occasions
  // Chooses today's walk, saves it in the trial file and goes to its first
  // cell without a value. Refused when it names no trait of the trial.
  Status set_walk(const WalkChoice& choice);
  void set_every_trait_per_plot(bool on);
  void set_blind(bool blind) { blind_ = blind; }
  // Who is measuring from now on. Precondition: not empty.
  void set_observer(const std::string& observer) { observer_ = observer; }

  RecordSession(RecordSession&&) = default;

 private:
  explicit RecordSession(OpenTrial open) : open_(std::move(open)) {}
  Status reload();
  std::vector<ObservationKey> own_live_keys(std::int64_t plot_id, std::int64_t trait_id, int occasion) const;
  Result<ObservationKey> save_row(NewObservation o);
  EntryOutcome check_and_save(bool confirmed);
  void remember(std::int64_t plot_id, std::int64_t trait_id, int occasion);
  void leave_cell();   // E1
  void go_to(const WalkCell& cell);
  void go_to_first_open();
  void advance();      // to the next cell of the walk, keeping nothing typed
  struct WalkProgress {
    int done = 0;
    std::vector<int> done_per_trait;
  };
  WalkProgress walk_progress() const;
  bool cell_recorded(size_t plot, size_t trait, int occasion) const;

  OpenTrial open_;
  std::string observer_;
  std::vector<LiveObservation> live_;   // cached live rows, refreshed after each save
  std::uint64_t revision_ = 0;
  std::int64_t data_version_ = -1;      // PRAGMA data_version at the last read
  mutable std::optional<std::pair<std::uint64_t, WalkProgress>> progress_;   // at revision_
  size_t plot_ = 0, trait_ = 0;
  int occasion_ = 1;
  Walk walk_;
  bool blind_ = false;
  // The value being entered.
  std::string typed_;
  struct Pending {
    std::string text;
    std::string suggestion;
    bool refused = false;   // only the suggestion is offered, not Confirm
  };
  std::optional<Pending> pending_;
  std::string notice_;
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
