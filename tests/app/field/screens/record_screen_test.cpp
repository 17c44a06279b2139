// The real Record screen driven headlessly: a Dear ImGui context without a
// window, taps and keys injected as the platform would (PLATFORM-NOTES.md:
// position, press, release), the session's database checked afterwards.

#include "app/field/screens/record_screen.h"

#include <doctest/doctest.h>

#include "tests/test_support.h"
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"

#include <filesystem>

#include "storage/plan_file.h"

namespace furrow {
namespace {

constexpr int kEnterKey = 257;   // any free index; mapped to ImGuiKey_Enter below

class HeadlessScreen {
 public:
  HeadlessScreen(RecordSession* session, float width, float height)
      : session_(session), ui_(width, height, [this] {
          const auto commands = draw_record_screen(session_->view(), theme_, 1.0f, &state_);
          pending_.insert(pending_.end(), commands.begin(), commands.end());
        }) {
    ImGui::GetIO().KeyMap[ImGuiKey_Enter] = kEnterKey;
    frame();
  }

  // One frame, then the commands it produced, as the field app applies them.
  void frame() {
    ui_.frame();
    for (const RecordCommand& c : pending_) apply_record_command(c, *session_, &state_);
    pending_.clear();
  }

  void tap(const std::string& label) {
    const TapTarget* t = test::find_target(state_.targets, label);
    REQUIRE_MESSAGE(t != nullptr, "no item '" << label << "' on the screen");
    const TapTarget target = *t;
    ImGuiIO& io = ImGui::GetIO();
    io.MousePos = ImVec2((target.x0 + target.x1) / 2, (target.y0 + target.y1) / 2);
    frame();
    io.MouseDown[0] = true;
    frame();
    io.MouseDown[0] = false;
    frame();
    frame();
  }

  void type(const std::string& text) {
    ImGui::GetIO().AddInputCharactersUTF8(text.c_str());
    frame();
  }

  void press_enter() {
    ImGuiIO& io = ImGui::GetIO();
    io.KeysDown[kEnterKey] = true;
    frame();
    io.KeysDown[kEnterKey] = false;
    frame();
    frame();
  }

  const RecordScreenState& state() const { return state_; }

 private:
  RecordSession* session_;
  Theme theme_ = make_theme(ThemeKind::daylight);
  RecordScreenState state_;
  std::vector<RecordCommand> pending_;
  test::HeadlessImGui ui_;
};

std::optional<std::string> stored(const std::string& db, const std::string& label, size_t trait) {
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  const StoredTrial& t = open->trial;
  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    if (t.layout.plots[i].label != label) continue;
    const auto live = live_observations(open->db, t.trait_ids[trait]);
    REQUIRE(live.ok());
    for (const auto& x : *live)
      if (x.plot_id == t.plot_ids[i]) return x.value ? *x.value : "missing: " + x.missing_reason.value_or("");
  }
  return std::nullopt;
}

TEST_CASE("repeated taps on one key all count") {
  const std::string db = test::fresh_demo_trial("repeat.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  HeadlessScreen screen(&*session, 1280, 800);
  screen.tap("5");
  screen.tap("5");
  screen.tap("5");
  CHECK(screen.state().typed == "555");
  screen.tap("Del");
  screen.tap("Del");
  CHECK(screen.state().typed == "5");
}

TEST_CASE("keypad taps enter a value that is then in the database") {
  const std::string db = test::fresh_demo_trial("keypad.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);   // plant height
  HeadlessScreen screen(&*session, 1280, 800);
  screen.tap("9");
  screen.tap("5");
  CHECK(screen.state().typed == "95");
  screen.tap("Save");
  CHECK(screen.state().tone == RecordScreenState::Tone::saved);
  CHECK(stored(db, "101", 1) == "95");
  CHECK(session->view().plot_label == "102");
}

TEST_CASE("a refused value shows the banner and saves nothing; a soft-limit value is saved after Confirm") {
  const std::string db = test::fresh_demo_trial("banner.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  HeadlessScreen screen(&*session, 1280, 800);
  for (const char* k : {"4", "0", "0"}) screen.tap(k);
  screen.tap("Save");
  CHECK(screen.state().tone == RecordScreenState::Tone::refuse);
  CHECK(screen.state().banner.find("possible range") != std::string::npos);
  CHECK_FALSE(stored(db, "101", 1).has_value());
  for (int i = 0; i < 3; ++i) screen.tap("Del");
  for (const char* k : {"1", "5", "0"}) screen.tap(k);
  screen.tap("Save");
  INFO(screen.state().banner << " / typed " << screen.state().typed);
  CHECK(screen.state().tone == RecordScreenState::Tone::confirm);
  CHECK_FALSE(stored(db, "101", 1).has_value());
  screen.tap("Confirm value");
  CHECK(stored(db, "101", 1) == "150");
}

TEST_CASE("skip with a reason, jump by a typed label with Enter, undo") {
  const std::string db = test::fresh_demo_trial("skip_jump.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  HeadlessScreen screen(&*session, 800, 1280);   // portrait
  screen.tap("Skip plot...");
  screen.tap("flooded");
  CHECK(stored(db, "101", 0) == "missing: flooded");
  screen.tap("plot label");
  screen.type("305");
  screen.press_enter();
  CHECK(session->view().plot_label == "305");
  screen.tap("2");
  screen.tap("4");
  screen.tap("0");
  screen.tap("Save");
  CHECK(stored(db, "305", 0) == "240");
  screen.tap("Undo last entry");
  CHECK(stored(db, "305", 0) == "missing: withdrawn");
}

TEST_CASE("every tappable item is at least 48 px in both directions at scale 1 (Material Design touch target)") {
  const std::string db = test::fresh_demo_trial("sizes.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  for (auto [w, h] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    HeadlessScreen screen(&*session, w, h);
    screen.tap("Skip plot...");   // shows the reasons too
    REQUIRE(screen.state().targets.size() >= 20);
    for (const TapTarget& t : screen.state().targets) {
      INFO(t.label << ": " << (t.x1 - t.x0) << " x " << (t.y1 - t.y0));
      CHECK(t.x1 - t.x0 >= kTouchTargetPx);
      CHECK(t.y1 - t.y0 >= kTouchTargetPx);
    }
  }
}

}  // namespace
}  // namespace furrow
