#pragma once
// The Settings screen: observer name, UI scale, daylight or dark theme, alpha
// for comparisons, blind scoring. Draws from the current settings and
// returns the changed settings when the crew changed something.

#include <optional>
#include <string>
#include <vector>

#include "app/field/screens/record_screen.h"
#include "app/field/settings.h"
#include "app/work/theme.h"

namespace furrow {

struct SettingsScreenState {
  char observer[96] = {};
  bool observer_loaded = false;
  std::vector<TapTarget> targets;   // rebuilt every frame
};

// `top_px`: where the screen starts below the navigation bar.
std::optional<Settings> draw_settings_screen(const Settings& current, const Theme& theme, float scale, float top_px,
                                             SettingsScreenState* state);

}  // namespace furrow
