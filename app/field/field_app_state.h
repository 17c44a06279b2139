#pragma once
// Everything the touch app holds between frames, apart from the window: the
// open trial's session, each screen's state, derived views kept until the
// log changes, and the commands the screens return. Drawing needs a current
// Dear ImGui frame; nothing here needs a window, so the tests drive the real
// app headlessly (tests/app/field/field_app_tap_test.cpp).

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "app/field/field_app.h"
#include "app/field/settings.h"
#include "app/field/screens/record_screen.h"
#include "app/work/record_session.h"
#include "app/work/theme.h"
#include "core/result.h"

namespace furrow {

enum class Screen { trials, record, map, check, leaving, station, settings, help };

// "trials", "record", "map", "check", "leaving", "station", "settings" or
// "help"; anything else is the Record screen.
Screen screen_named(const std::string& name);

class FieldAppState {
 public:
  // `folder`: the data folder (trials, bundles, exports); `settings_path`
  // where changed settings are saved (empty: not saved).
  static std::unique_ptr<FieldAppState> create(const FieldAppOptions& options, Settings settings,
                                               std::string settings_path, std::string folder);
  virtual ~FieldAppState();

  // Opens a trial database; on failure the current trial stays open.
  virtual Status open_trial(const std::string& path) = 0;
  virtual void set_screen(Screen screen) = 0;
  virtual Screen screen() const = 0;
  // Work is under way that needs frames without waiting for input.
  virtual bool busy() const = 0;
  virtual bool has_trial() const = 0;
  virtual const std::string& trial_name() const = 0;
  // Draws one frame's screens (between ImGui::NewFrame and Render); returns
  // changed settings, if any, for the caller to apply.
  virtual std::optional<Settings> draw(float scale) = 0;
  virtual void apply_settings(const Settings& changed) = 0;
  virtual const Theme& theme() const = 0;
  virtual const Settings& settings() const = 0;

  // For tests: what the last frame drew (navigation bar and screen), the
  // open session, the Record screen's own state.
  virtual std::vector<TapTarget> targets() const = 0;
  virtual const RecordSession* session() const = 0;
  virtual const RecordScreenState& record_state() const = 0;
};

}  // namespace furrow
