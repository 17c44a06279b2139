#include "app/field_app.h"

#include <iostream>

#include "app/record_session.h"
#include "app/screens/record_screen.h"
#include "app/settings.h"
#include "platform/app_window.h"
#include "platform/data_folder.h"

namespace furrow {
namespace {

// While nothing happens the loop sleeps in the window system this long at a
// time (battery: no frames are drawn without input).
constexpr double kIdleWaitSeconds = 10.0;
// Frames drawn before a screenshot, so that fonts and layout have settled.
constexpr int kScreenshotFrames = 3;

}  // namespace

int run_field_app(const FieldAppOptions& o) {
  Settings settings;
  std::string settings_path;
  if (auto folder = data_folder()) {
    settings_path = *folder + "/settings.json";
    auto loaded = load_settings(settings_path);
    if (loaded) settings = *loaded;
    else std::cerr << loaded.problem().message << " (using the defaults)\n";
  }
  const std::string observer = o.observer.empty() ? settings.observer : o.observer;
  auto session = RecordSession::open(o.db, observer);
  if (!session) {
    std::cerr << o.db << ": " << session.problem().message << "\n";
    return 2;
  }
  session->set_blind(settings.blind_scoring);
  auto window = AppWindow::create("Furrow - " + session->trial().plan.name, o.width, o.height,
                                  static_cast<float>(settings.ui_scale));
  if (!window) {
    std::cerr << window.problem().message << "\n";
    return 1;
  }
  const Theme theme = make_theme(settings.theme);
  RecordScreenState ui;
  int frames = 0;
  while (!(*window)->should_close()) {
    (*window)->begin_frame(o.screenshot.empty() && frames > 1 ? kIdleWaitSeconds : 0.0);
    for (const RecordCommand& c : draw_record_screen(session->view(), theme, (*window)->scale(), &ui))
      apply_record_command(c, *session, &ui);
    (*window)->end_frame(theme.background.r, theme.background.g, theme.background.b);
    if (!o.screenshot.empty() && ++frames >= kScreenshotFrames) {
      if (auto s = (*window)->save_screenshot(o.screenshot); !s) {
        std::cerr << s.problem().message << "\n";
        return 1;
      }
      return 0;
    }
    ++frames;
  }
  return 0;
}

}  // namespace furrow
