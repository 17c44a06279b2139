#pragma once
// The Record screen: one plot at a time, a large keypad, the checks' banner.
// Draws from a read-only RecordView and returns what the crew asked for as
// commands; the caller applies them to the RecordSession.

#include <string>
#include <vector>

#include "app/work/record_session.h"
#include "app/work/theme.h"

namespace furrow {

struct RecordCommand {
  enum class Kind { enter, confirm, skip, next, previous, jump, undo } kind = Kind::next;
  std::string text;   // the value, the skip reason or the plot label
};

// What the screen itself keeps between frames (typed text, banner).
// Where each tappable item was drawn in the last frame (screen pixels), so
// that tests can tap them and measure their size.
struct TapTarget {
  std::string label;
  float x0 = 0, y0 = 0, x1 = 0, y1 = 0;
};

struct RecordScreenState {
  std::string typed;
  std::string banner;
  enum class Tone { none, saved, confirm, refuse } tone = Tone::none;
  bool choosing_skip_reason = false;
  char jump_label[64] = {};
  std::vector<TapTarget> targets;   // rebuilt every frame
};

// Minimum size of anything a finger taps, in pixels at scale 1 (Material
// Design touch-target guideline: 48 dp; WCAG 2.1 SC 2.5.5 asks for 44 px).
inline constexpr float kTouchTargetPx = 48.0f;

// `top_px`: where the screen starts below the navigation bar.
std::vector<RecordCommand> draw_record_screen(const RecordView& view, const Theme& theme, float scale,
                                              RecordScreenState* state, float top_px = 0.0f);

// Shows a command's outcome in the banner.
void show_outcome(const EntryOutcome& outcome, RecordScreenState* state);

// Carries out one command on the session and shows its outcome.
void apply_record_command(const RecordCommand& command, RecordSession& session, RecordScreenState* state);

}  // namespace furrow
