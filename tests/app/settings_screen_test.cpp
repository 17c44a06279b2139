// The Settings screen driven headlessly: taps change the settings it returns.

#include "app/screens/settings_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

namespace furrow {
namespace {

class HeadlessSettings {
 public:
  HeadlessSettings(float width, float height) {
    ImGui::CreateContext();
    ImGuiIO& io = ImGui::GetIO();
    io.IniFilename = nullptr;
    io.DisplaySize = ImVec2(width, height);
    io.DeltaTime = 1.0f / 60.0f;
    unsigned char* pixels = nullptr;
    int w = 0, h = 0;
    io.Fonts->GetTexDataAsRGBA32(&pixels, &w, &h);
    frame();
  }
  ~HeadlessSettings() { ImGui::DestroyContext(); }

  void frame() {
    ImGui::NewFrame();
    if (auto changed = draw_settings_screen(settings, make_theme(settings.theme), 1.0f, 80.0f, &state))
      settings = *changed;
    ImGui::Render();
  }

  void tap(const std::string& label) {
    const TapTarget* t = nullptr;
    for (const TapTarget& x : state.targets)
      if (x.label == label) t = &x;
    REQUIRE_MESSAGE(t != nullptr, "no item '" << label << "'");
    ImGuiIO& io = ImGui::GetIO();
    io.MousePos = ImVec2((t->x0 + t->x1) / 2, (t->y0 + t->y1) / 2);
    frame();
    io.MouseDown[0] = true;
    frame();
    io.MouseDown[0] = false;
    frame();
    frame();
  }

  Settings settings;
  SettingsScreenState state;
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
