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

void apply(const RecordCommand& c, RecordSession& s, RecordScreenState& ui) {
  auto show_status = [&](const Status& st, const std::string& done) {
    ui.banner = st ? done : st.problem().message;
    ui.tone = st ? RecordScreenState::Tone::saved : RecordScreenState::Tone::refuse;
  };
  switch (c.kind) {
    case RecordCommand::Kind::enter: show_outcome(s.enter(c.text), &ui); break;
    case RecordCommand::Kind::confirm: show_outcome(s.confirm(), &ui); break;
    case RecordCommand::Kind::skip: show_status(s.skip(c.text, ""), "skipped: " + c.text); break;
    case RecordCommand::Kind::next: s.next(); ui.tone = RecordScreenState::Tone::none; break;
    case RecordCommand::Kind::previous: s.previous(); ui.tone = RecordScreenState::Tone::none; break;
    case RecordCommand::Kind::jump: show_status(s.jump_to(c.text), "plot " + c.text); break;
    case RecordCommand::Kind::undo: show_status(s.undo(), "the last entry was undone (a new log row)"); break;
  }
}

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
      apply(c, *session, ui);
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
