// Every screen of the real field app, in both window shapes and at every
// text size from 75 % to 300 %: each tappable item is at least 48 px in both
// directions, lies inside the window's width, and can be brought fully into
// view by dragging the screen with a finger (nothing is cut off for good).

#include <doctest/doctest.h>
#include <imgui.h>

#include <filesystem>
#include <map>
#include <set>

#include "app/field/field_app_state.h"
#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

const char* kTabs[] = {"Trials", "Record", "Field map", "Check", "Before leaving", "Station", "Settings", "Help", "Screens"};
bool is_tab(const std::string& l) { return std::find(std::begin(kTabs), std::end(kTabs), l) != std::end(kTabs); }

TEST_CASE("every screen in both shapes and text 75-300 %: items 48 px or more inside the width and reachable by dragging") {
  const std::string db = test::demo_day_trial("layout.furrow");
  const auto folder = test::scratch_dir("layout");
  std::filesystem::remove_all(folder);
  std::filesystem::create_directories(folder);
  const Screen screens[] = {Screen::trials, Screen::record,  Screen::map,      Screen::check,
                            Screen::leaving, Screen::station, Screen::settings, Screen::help};
  for (auto [w, h] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    for (float scale : {0.75f, 1.0f, 1.5f, 2.0f, 3.0f}) {
      FieldAppOptions options{db, "", "Ana"};
      Settings settings;
      settings.observer = "Ana";
      auto app = FieldAppState::create(options, settings, "", folder.string());
      REQUIRE(app->open_trial(db).ok());
      test::HeadlessImGui ui(w, h, [&] {
        ImGui::GetIO().FontGlobalScale = scale;
        (void)app->draw(scale);
      });
      for (Screen screen : screens) {
        app->set_screen(screen);
        ui.frame();
        ui.frame();
        std::set<std::string> all, seen;
        const float min_px = kTouchTargetPx;
        for (int drag = 0; drag < 40; ++drag) {
          const auto targets = app->targets();
          float nav_bottom = 0;
          for (const TapTarget& t : targets)
            if (is_tab(t.label)) nav_bottom = std::max(nav_bottom, t.y1);
          const float top = nav_bottom + ImGui::GetStyle().WindowPadding.y;   // below the bar's own margin
          size_t before = seen.size();
          for (const TapTarget& t : targets) {
            INFO("screen " << static_cast<int>(screen) << " at " << w << " x " << h << ", text " << scale * 100
                           << " %: '" << t.label << "' " << t.x0 << "," << t.y0 << " - " << t.x1 << "," << t.y1);
            all.insert(t.label);
            CHECK(t.x1 - t.x0 >= min_px);
            CHECK(t.y1 - t.y0 >= min_px);
            CHECK(t.x0 >= 0);
            CHECK(t.x1 <= w + 0.5f);
            const bool visible = is_tab(t.label) || (t.y0 >= top - 0.5f && t.y1 <= h + 0.5f);
            if (visible) seen.insert(t.label);
          }
          if (seen.size() == all.size() && drag > 0) break;
          (void)before;
          // A finger drags the screen up by half its height, at the window's
          // left edge or its right edge in turn (a list or a map inside the
          // screen scrolls under the finger, the screen at its margin).
          ImGuiIO& io = ImGui::GetIO();
          io.MousePos = ImVec2(drag % 2 ? 3.0f : w - 4, h - 8);
          ui.frame();
          io.MouseDown[0] = true;
          ui.frame();
          for (int i = 0; i < 10; ++i) {
            io.MousePos.y -= h / 20;
            ui.frame();
          }
          io.MouseDown[0] = false;
          ui.frame();
          ui.frame();
        }
        for (const std::string& label : all) {
          INFO("screen " << static_cast<int>(screen) << " at " << w << " x " << h << ", text " << scale * 100 << " %");
          CHECK_MESSAGE(seen.count(label) == 1, "'" << label << "' never came fully into view");
        }
        // Back to the top for the next screen.
        for (int i = 0; i < 3; ++i) ui.frame();
      }
    }
  }
}

}  // namespace
}  // namespace furrow
