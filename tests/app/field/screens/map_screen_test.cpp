// The Field map screen driven headlessly: a tap opens a plot, a tap on plots
// smaller than a fingertip zooms in first, every target is large enough.

#include "app/field/screens/map_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "app/work/record_session.h"
#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

// A 2,000-plot nursery: 40 rows x 50 columns, every plot collected.
FieldMap big_map(std::vector<std::string>* labels) {
  FieldMap m;
  m.rows = 40;
  m.columns = 50;
  m.site_names = {""};
  const Theme t = make_theme(ThemeKind::daylight);
  for (int r = 1; r <= 40; ++r)
    for (int c = 1; c <= 50; ++c) {
      MapPlot p;
      p.plot_index = m.plots.size();
      p.row = r;
      p.column = c;
      p.state = PlotState::collected;
      p.fill = t.collected;
      p.text = text_on(p.fill);
      m.plots.push_back(p);
      labels->push_back(std::to_string(1000 * r + c));
    }
  m.legend = {{t.collected, MapPattern::none, "collected (2000)"}};
  return m;
}

struct Headless {
  Headless(float w, float h, FieldMap m, std::vector<std::string> l)
      : map(std::move(m)), labels(std::move(l)), ui(w, h, [this] {
          if (auto a = draw_map_screen(map, labels, "plant height (cm)", theme, 1.0f, 0.0f, &state)) action = a;
        }) {
    ui.frame();
    ui.frame();
  }
  FieldMap map;
  std::vector<std::string> labels;
  Theme theme = make_theme(ThemeKind::daylight);
  MapScreenState state;
  std::optional<MapAction> action;
  test::HeadlessImGui ui;
};

void check_sizes(const std::vector<TapTarget>& targets) {
  for (const TapTarget& t : targets) {
    CAPTURE(t.label);
    CHECK(t.x1 - t.x0 >= kTouchTargetPx);
    CHECK(t.y1 - t.y0 >= kTouchTargetPx);
  }
}

TEST_CASE("the demo field fits the screen with plots large enough to tap; a tap opens the plot") {
  const std::string path = test::demo_day_trial("map_screen_test.furrow");
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  const StoredTrial& t = s->trial();
  std::vector<std::string> labels;
  size_t slip = 0;
  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    labels.push_back(t.layout.plots[i].label);
    if (labels.back() == "307") slip = i;
  }
  const BeforeLeaving leaving = s->before_leaving(0.05);
  Headless h(1280, 800, build_field_map(t, s->live(), 1, 1, MapColouring::status, make_theme(ThemeKind::daylight),
                                        &leaving, nullptr),
             labels);
  const TapTarget* plot = test::find_target(h.state.targets, "plot 307");
  REQUIRE(plot != nullptr);
  check_sizes(h.state.targets);
  h.ui.tap(*plot);
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == MapAction::Kind::open_plot);
  CHECK(h.action->plot_index == slip);
}

TEST_CASE("2,000 plots: a tap on the whole-field view zooms in around it, the next tap opens a plot") {
  for (const auto& [w, hgt] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    std::vector<std::string> labels;
    FieldMap m = big_map(&labels);
    Headless h(w, hgt, std::move(m), std::move(labels));
    CHECK(test::find_target(h.state.targets, "plot 1001") == nullptr);   // too small to open yet
    const TapTarget* whole = test::find_target(h.state.targets, "map");
    REQUIRE(whole != nullptr);
    check_sizes(h.state.targets);
    h.ui.tap(*whole);
    CHECK_FALSE(h.action.has_value());
    CHECK(h.state.cell_px == doctest::Approx(72.0f));
    h.ui.frame();
    check_sizes(h.state.targets);
    // Plots now on screen can be opened; tap the first one listed.
    const TapTarget* some = nullptr;
    for (const TapTarget& t : h.state.targets)
      if (t.label.rfind("plot ", 0) == 0) { some = &t; break; }
    REQUIRE(some != nullptr);
    const std::string label = some->label.substr(5);
    h.ui.tap(*some);
    REQUIRE(h.action.has_value());
    CHECK(h.action->kind == MapAction::Kind::open_plot);
    CHECK(h.labels[h.action->plot_index] == label);
    // The zoom went to where the finger was: the middle of the field, not the corner.
    CHECK(label != "1001");
  }
}

TEST_CASE("colouring buttons switch the map and say so") {
  std::vector<std::string> labels;
  FieldMap m = big_map(&labels);
  Headless h(1280, 800, std::move(m), std::move(labels));
  h.ui.tap(*test::find_target(h.state.targets, "Value"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == MapAction::Kind::colouring_changed);
  CHECK(h.state.colouring == MapColouring::value);
  h.action.reset();
  h.ui.tap(*test::find_target(h.state.targets, "next trait"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == MapAction::Kind::next_trait);
}

}  // namespace
}  // namespace furrow
