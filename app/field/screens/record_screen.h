#pragma once
// The Record screen: one plot at a time along today's walk, a large keypad,
// the checks' banner, the walk chooser. Draws from a read-only RecordView and
// returns what the crew asked for as commands; `apply_record_command`
// carries them out on the RecordSession (which owns the value being entered,
// rules E1-E4 in record_session.h).
//
// Layout rule: the keypad, Save and the plot navigation keep their places
// whatever the banner says. The banner has a reserved area of fixed height
// (its text scrolls inside it when long) above the commands in landscape and
// above the keypad in portrait.
//
// Keyboard and scanner: digits, the decimal point, Backspace and Enter work
// without tapping a field. Keys that arrive in a burst (a scanner types
// faster than kScanKeyGapSeconds between keys) and end in Enter are a stake
// label: that plot opens.

#include <string>
#include <vector>

#include "app/work/record_session.h"
#include "app/work/theme.h"

namespace furrow {

struct RecordCommand {
  enum class Kind {
    type,            // text: keys to append
    erase,           // one character back
    save,            // save the typed value
    confirm,         // Confirm value
    save_suggestion, // "Save 91 instead"
    value_is_right,  // the saved value is right (text: the check key, e.g. "outlier")
    skip,            // text: the skip reason (note in `note`)
    next,
    previous,
    jump,            // text: the plot label
    undo,
    set_walk,        // walk: the new choice
    note             // text: a note for this plot
  } kind = Kind::next;
  std::string text{};
  std::string note{};
  WalkChoice walk{};
};

// Where each tappable item was drawn in the last frame (screen pixels), so
// that tests can tap them and measure their size.
struct TapTarget {
  std::string label;
  float x0 = 0, y0 = 0, x1 = 0, y1 = 0;
};

// What the screen itself keeps between frames (banner, open panels, keys
// not yet known to be typing or a scan).
struct RecordScreenState {
  std::string banner;
  enum class Tone { none, saved, confirm, refuse } tone = Tone::none;
  bool choosing_skip_reason = false;
  bool writing_note = false, note_for_skip = false;
  bool choosing_walk = false;
  char jump_label[512] = {};   // a typed label or a scanned stake code (core/stake_code.h)
  char note_text[256] = {};
  // Keys from a keyboard or scanner, held until they are known to be typing
  // (a pause) or a scanned label (Enter after a burst).
  std::string held_keys;
  double last_key_time = -1;
  std::vector<TapTarget> targets;   // rebuilt every frame
};

// A scanner types its keys closer together than this; people do not
// (common practice for telling scanners from typing; the value is ours).
inline constexpr double kScanKeyGapSeconds = 0.03;

// Minimum size of anything a finger taps, in pixels at scale 1 (Material
// Design touch-target guideline: 48 dp; WCAG 2.1 SC 2.5.5 asks for 44 px).
inline constexpr float kTouchTargetPx = 48.0f;
// The touch-target size at a text size: larger text makes targets larger,
// smaller text never makes them smaller than kTouchTargetPx.
inline float touch_px(float scale) { return kTouchTargetPx * (scale > 1.0f ? scale : 1.0f); }

// `top_px`: where the screen starts below the navigation bar. `trial` gives
// the walk chooser its traits and blocks. `saved_question`: what Before
// leaving asks about the cell's saved value (an outlier or a value to check),
// else empty; the banner shows it and offers "Value is right".
std::vector<RecordCommand> draw_record_screen(const RecordView& view, const StoredTrial& trial, const Walk& walk,
                                              const std::string& saved_question, const Theme& theme, float scale,
                                              RecordScreenState* state, float top_px = 0.0f);

// Shows a command's outcome in the banner.
void show_outcome(const EntryOutcome& outcome, RecordScreenState* state);

// Carries out one command on the session and shows its outcome.
void apply_record_command(const RecordCommand& command, RecordSession& session, RecordScreenState* state);

}  // namespace furrow
