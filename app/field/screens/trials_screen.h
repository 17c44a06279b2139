#pragma once
// The Trials screen: the trial databases in this device's data folder and
// those opened from elsewhere (design, progress, last change); open one,
// create one from a plan file (asking first when a trial of that name is
// here already), remove one (moved to a trash folder, never deleted), open
// the demo trial.

#include <optional>
#include <string>
#include <vector>

#include "app/field/screens/record_screen.h"
#include "app/work/theme.h"
#include "app/work/trial_summary.h"

namespace furrow {

struct TrialsAction {
  enum class Kind { open, create_from_plan, open_demo, copy_for_device, remove, cancel } kind = Kind::open;
  std::string path;               // the trial database or the plan file
  bool confirmed = false;         // the crew answered the question about it
};

// A question the screen asks before acting (a second trial from the same
// plan, removing a trial, a station's trial file typed in): its words and
// one button per answer.
struct TrialsQuestion {
  std::string text;
  std::vector<std::pair<std::string, TrialsAction>> answers;
};

struct TrialsScreenState {
  char plan_path[512] = {};
  std::string message;            // outcome of the last action, in plain words
  bool message_is_problem = false;
  std::optional<TrialsQuestion> question;
  std::vector<TapTarget> targets; // rebuilt every frame
};

struct TrialsView {
  std::string folder;                  // the data folder
  std::string current;                 // path of the open trial, empty when none
  std::vector<TrialSummary> trials;
  std::vector<std::string> plan_files; // in the data folder
  bool demo_available = false;
};

std::optional<TrialsAction> draw_trials_screen(const TrialsView& view, const Theme& theme, float scale, float top_px,
                                               TrialsScreenState* state);

}  // namespace furrow
