#include "app/field_app.h"

#include <iostream>

#include "app/record_session.h"
#include "app/screens/record_screen.h"
#include "app/screens/settings_screen.h"
#include "app/screens/leaving_screen.h"
#include "app/screens/help_screen.h"
#include "app/screens/widgets.h"

#include <imgui.h>
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
  if (settings.observer.empty()) settings.observer = observer;
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
  Theme theme = make_theme(settings.theme);
  RecordScreenState record_ui;
  SettingsScreenState settings_ui;
  LeavingScreenState leaving_ui;
  std::vector<TapTarget> nav_targets;
  enum class Screen { record, leaving, settings, help } screen = o.start_screen == "settings" ? Screen::settings
                                                                 : o.start_screen == "leaving"  ? Screen::leaving
                                                                 : o.start_screen == "help"     ? Screen::help
                                                                                                : Screen::record;
  std::optional<BeforeLeaving> leaving;   // computed when the screen is opened
  int frames = 0;
  while (!(*window)->should_close()) {
    (*window)->begin_frame(o.screenshot.empty() && frames > 1 ? kIdleWaitSeconds : 0.0);
    const float scale = (*window)->scale();
    const float bar = kTouchTargetPx * scale * 1.4f;
    // Navigation bar: one tap to each screen.
    const ImGuiViewport* vp = ImGui::GetMainViewport();
    ImGui::SetNextWindowPos(vp->WorkPos);
    ImGui::SetNextWindowSize(ImVec2(vp->WorkSize.x, bar + 2 * ImGui::GetStyle().WindowPadding.y));
    nav_targets.clear();
    ImGui::PushStyleColor(ImGuiCol_WindowBg, to_imgui(theme.panel));
    ImGui::Begin("##screens", nullptr, ImGuiWindowFlags_NoDecoration | ImGuiWindowFlags_NoMove);
    const struct { const char* label; Screen s; } tabs[] = {
        {"Record", Screen::record}, {"Before leaving", Screen::leaving}, {"Settings", Screen::settings},
        {"Help", Screen::help}};
    for (size_t i = 0; i < 4; ++i) {
      if (i) ImGui::SameLine();
      const bool current = screen == tabs[i].s;
      const ButtonLook look{current ? theme.accent : theme.background, current ? theme.accent_text : theme.text};
      if (solid_button(tabs[i].label, ImVec2(3.6f * kTouchTargetPx * scale, bar), look, &nav_targets)) {
        screen = tabs[i].s;
        leaving.reset();
      }
    }
    ImGui::End();
    ImGui::PopStyleColor();
    const float top = bar + 2 * ImGui::GetStyle().WindowPadding.y;
    std::optional<Settings> changed;
    if (screen == Screen::record) {
      for (const RecordCommand& c : draw_record_screen(session->view(), theme, scale, &record_ui, top))
        apply_record_command(c, *session, &record_ui);
    } else if (screen == Screen::leaving) {
      if (!leaving) leaving = session->before_leaving(settings.alpha);
      if (auto item = draw_leaving_screen(*leaving, theme, scale, top, &leaving_ui)) {
        session->set_trait(item->trait_index);
        (void)session->jump_to(session->trial().layout.plots[item->plot_index].label);
        screen = Screen::record;
      }
    } else if (screen == Screen::help) {
      draw_help_screen(theme, scale, top);
    } else {
      changed = draw_settings_screen(settings, theme, scale, top, &settings_ui);
    }
    (*window)->end_frame(theme.background.r, theme.background.g, theme.background.b);
    if (changed) {
      const bool rescale = changed->ui_scale != settings.ui_scale;
      settings = *changed;
      theme = make_theme(settings.theme);
      session->set_blind(settings.blind_scoring);
      if (!settings.observer.empty()) session->set_observer(settings.observer);
      if (!settings_path.empty())
        if (auto s = save_settings(settings_path, settings); !s) std::cerr << s.problem().message << "\n";
      if (rescale) (*window)->set_ui_scale(static_cast<float>(settings.ui_scale));
    }
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
