// The Before leaving screen driven headlessly: a tap opens the item, a drag
// scrolls the list without opening anything, every row is large enough.

#include "app/field/screens/leaving_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"

namespace furrow {
namespace {

BeforeLeaving list_of(int n) {
  BeforeLeaving b;
  for (int i = 0; i < n; ++i)
    b.items.push_back({{i == 0 ? LeavingItem::Kind::outlier : LeavingItem::Kind::missing}, static_cast<size_t>(i), 0, 1,
                       "plot " + std::to_string(101 + i) + ", plant height: " +
                           (i == 0 ? "outlier plot: 9.1 is far from what the other plots predict" : "not recorded yet")});
  b.outliers = 1;
  b.missing = n - 1;
  return b;
}

struct Headless {
  Headless(float w, float h) : ui(w, h, [this] {
    if (auto o = draw_leaving_screen(list, "plant height; every block", theme, 1.0f, 0.0f, &state)) opened = o;
  }) {
    ui.frame();
  }
  void frame() { ui.frame(); }
  BeforeLeaving list = list_of(30);
  Theme theme = make_theme(ThemeKind::daylight);
  LeavingScreenState state;
  std::optional<OpenItem> opened;
  test::HeadlessImGui ui;
};

TEST_CASE("a tap on a row opens that plot and trait") {
  Headless h(1280, 800);
  h.ui.tap(h.state.targets.at(0));
  REQUIRE(h.opened.has_value());
  CHECK(h.opened->plot_index == 0);
}

TEST_CASE("dragging the list scrolls it and opens nothing") {
  Headless h(1280, 800);
  const TapTarget& row = h.state.targets.at(5);
  const float y_before = row.y0;
  ImGuiIO& io = ImGui::GetIO();
  io.MousePos = ImVec2((row.x0 + row.x1) / 2, (row.y0 + row.y1) / 2);
  h.frame();
  io.MouseDown[0] = true;
  h.frame();
  for (int i = 0; i < 10; ++i) {
    io.MousePos.y -= 20;
    h.frame();
  }
  io.MouseDown[0] = false;
  h.frame();
  h.frame();
  CHECK_FALSE(h.opened.has_value());
  CHECK(h.state.targets.at(5).y0 < y_before - 100);   // the list moved up with the finger
}

TEST_CASE("every row is at least 48 px high and wide") {
  Headless h(800, 1280);
  REQUIRE(h.state.targets.size() == 30);
  for (const TapTarget& t : h.state.targets) {
    CHECK(t.x1 - t.x0 >= kTouchTargetPx);
    CHECK(t.y1 - t.y0 >= kTouchTargetPx);
  }
}

}  // namespace
}  // namespace furrow
