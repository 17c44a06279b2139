#pragma once
// The crew's settings, kept between runs in settings.json in the data folder.
// A missing file gives the defaults; a damaged one is reported and left as
// it is (never overwritten before the user saves again).

#include <string>

#include "app/work/theme.h"
#include "core/result.h"

namespace furrow {

struct Settings {
  std::string observer;              // recorded with every entry
  double ui_scale = 1.0;             // on top of the screen's content scale, 0.75-3
  ThemeKind theme = ThemeKind::daylight;
  double alpha = 0.05;               // for LSD, HSD and letters
  bool blind_scoring = false;        // hide treatment names while collecting
};

inline constexpr double kMinUiScale = 0.75;
inline constexpr double kMaxUiScale = 3.0;

// Reads settings; a missing file gives the defaults. A file that is not
// valid settings JSON gives a Problem naming the file and the field.
Result<Settings> load_settings(const std::string& path);

// Writes atomically (temporary file, then rename).
Status save_settings(const std::string& path, const Settings& s);

}  // namespace furrow
