// The Settings screen driven headlessly: taps change the settings it returns.

#include "app/field/screens/settings_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"

namespace furrow {
namespace {

class HeadlessSettings {
 public:
  HeadlessSettings(float width, float height) : ui_(width, height, [this] {
    if (auto changed = draw_settings_screen(settings, make_theme(settings.theme), 1.0f, 80.0f, &state))
      settings = *changed;
  }) {
    ui_.frame();
  }
  void frame() { ui_.frame(); }
  void tap(const std::string& label) {
    const TapTarget* t = test::find_target(state.targets, label);
    REQUIRE_MESSAGE(t != nullptr, "no item '" << label << "'");
    ui_.tap(*t);
  }

  Settings settings;
  SettingsScreenState state;

 private:
  test::HeadlessImGui ui_;
};

TEST_CASE("taps change theme, size, alpha and blind scoring") {
  HeadlessSettings screen(1280, 800);
  screen.tap("Dark");
  CHECK(screen.settings.theme == ThemeKind::dark);
  screen.tap("Larger");
  CHECK(screen.settings.ui_scale == 1.25);
  screen.tap("Smaller");
  screen.tap("Smaller");
  CHECK(screen.settings.ui_scale == 0.75);
  screen.tap("Smaller");   // not below the smallest size
  CHECK(screen.settings.ui_scale == 0.75);
  screen.tap("0.01");
  CHECK(screen.settings.alpha == 0.01);
  screen.tap("Blind scoring is off");
  CHECK(screen.settings.blind_scoring);
  screen.tap("observer");
  ImGui::GetIO().AddInputCharactersUTF8("Mara");
  screen.frame();
  CHECK(screen.settings.observer == "Mara");
}

TEST_CASE("every tappable item on Settings is at least 48 px in both window shapes") {
  for (auto [w, h] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    HeadlessSettings screen(w, h);
    REQUIRE(screen.state.targets.size() >= 9);
    for (const TapTarget& t : screen.state.targets) {
      INFO(t.label);
      CHECK(t.x1 - t.x0 >= kTouchTargetPx);
      CHECK(t.y1 - t.y0 >= kTouchTargetPx);
    }
  }
}

}  // namespace
}  // namespace furrow
