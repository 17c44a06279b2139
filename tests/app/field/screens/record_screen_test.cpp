// The real Record screen driven headlessly: a Dear ImGui context without a
// window, taps and keys injected as the platform would (PLATFORM-NOTES.md:
// position, press, release), the session's database checked afterwards.

#include "app/field/screens/record_screen.h"

#include <doctest/doctest.h>

#include "core/stake_code.h"
#include "tests/test_support.h"
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"

#include <filesystem>

#include "storage/plan_file.h"

namespace furrow {
namespace {

constexpr int kEnterKey = 257;       // any free indices; mapped to ImGuiKey_Enter and _Backspace below
constexpr int kBackspaceKey = 259;

class HeadlessScreen {
 public:
  HeadlessScreen(RecordSession* session, float width, float height)
      : session_(session), ui_(width, height, [this] {
          const auto commands = draw_record_screen(session_->view(), session_->trial(), session_->walk(), "", theme_,
                                                   1.0f, &state_);
          pending_.insert(pending_.end(), commands.begin(), commands.end());
        }) {
    ImGui::GetIO().KeyMap[ImGuiKey_Enter] = kEnterKey;
    ImGui::GetIO().KeyMap[ImGuiKey_Backspace] = kBackspaceKey;
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

  // Keys typed as a person types them: one at a time, a few frames apart.
  void type_slowly(const std::string& text) {
    for (char c : text) {
      const char one[2] = {c, 0};
      ImGui::GetIO().AddInputCharactersUTF8(one);
      for (int i = 0; i < 4; ++i) frame();
    }
  }

  void press(int key) {
    ImGuiIO& io = ImGui::GetIO();
    io.KeysDown[key] = true;
    frame();
    io.KeysDown[key] = false;
    frame();
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
  CHECK(session->view().typed == "555");
  screen.tap("Del");
  screen.tap("Del");
  CHECK(session->view().typed == "5");
}

TEST_CASE("keypad taps enter a value that is then in the database") {
  const std::string db = test::fresh_demo_trial("keypad.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);   // plant height
  HeadlessScreen screen(&*session, 1280, 800);
  screen.tap("9");
  screen.tap("5");
  CHECK(session->view().typed == "95");
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
  INFO(screen.state().banner << " / typed " << session->view().typed);
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

TEST_CASE("a stake's code typed by a scanner into the label field (then Enter) opens its plot") {
  const std::string db = test::fresh_demo_trial("scan_jump.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  HeadlessScreen screen(&*session, 1280, 800);
  const StoredTrial& t = session->trial();
  const std::string code = stake_code_text({t.uid, t.plan.name, "309"});
  REQUIRE(code.size() > 64);   // longer than a typed label
  screen.tap("plot label");
  screen.type(code);
  screen.press_enter();
  CHECK(session->view().plot_label == "309");
}

TEST_CASE("Confirm saves the text on screen: 9.1 asked about, Del x3, 91 typed, Confirm is gone and Save stores 91") {
  // Fault: Confirm used to save the value first asked about (9.1), not the one shown.
  const std::string db = test::demo_day_trial("confirm_text.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  REQUIRE(session->jump_to("109").ok());
  HeadlessScreen screen(&*session, 1280, 800);
  for (const char* k : {"9", ".", "1"}) screen.tap(k);
  screen.tap("Save");
  REQUIRE(screen.state().tone == RecordScreenState::Tone::confirm);
  CHECK(test::find_target(screen.state().targets, "Confirm value") != nullptr);
  // Every finding is shown, the slip's suggestion among them.
  CHECK(screen.state().banner.find("outside the usual range") != std::string::npos);
  CHECK(screen.state().banner.find("Did you mean 91") != std::string::npos);
  CHECK(test::find_target(screen.state().targets, "Save suggestion") != nullptr);
  for (int i = 0; i < 3; ++i) screen.tap("Del");
  screen.tap("9");
  screen.tap("1");
  CHECK(session->view().typed == "91");
  CHECK(test::find_target(screen.state().targets, "Confirm value") == nullptr);
  screen.tap("Save");
  CHECK(stored(db, "109", 1) == "91");
}

TEST_CASE("Save 91 instead: one tap saves the suggestion, checked like any entry") {
  const std::string db = test::demo_day_trial("suggest.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  REQUIRE(session->jump_to("110").ok());
  HeadlessScreen screen(&*session, 800, 1280);
  for (const char* k : {"9", ".", "4"}) screen.tap(k);
  screen.tap("Save");
  screen.tap("Save suggestion");
  CHECK(stored(db, "110", 1) == "94");
}

TEST_CASE("a slip beyond the possible range is refused and still offers the value probably meant") {
  const std::string db = test::demo_day_trial("slip_up.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  REQUIRE(session->jump_to("112").ok());
  HeadlessScreen screen(&*session, 1280, 800);
  for (const char* k : {"9", "1", "0"}) screen.tap(k);
  screen.tap("Save");
  CHECK(screen.state().tone == RecordScreenState::Tone::refuse);
  CHECK(screen.state().banner.find("possible range") != std::string::npos);
  CHECK(screen.state().banner.find("Did you mean 91") != std::string::npos);
  CHECK(test::find_target(screen.state().targets, "Confirm value") == nullptr);   // never confirmable
  screen.tap("Save suggestion");
  CHECK(stored(db, "112", 1) == "91");
}

TEST_CASE("a typed value does not follow the crew to the next plot; a question does not outlive its text") {
  const std::string db = test::demo_day_trial("follow.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  REQUIRE(session->jump_to("116").ok());
  HeadlessScreen screen(&*session, 1280, 800);
  screen.tap("8");
  screen.tap("8");
  screen.tap("Next plot");
  CHECK(session->view().plot_label == "117");
  CHECK(session->view().typed.empty());
  CHECK(screen.state().banner.find("88 typed on plot 116 was not saved") != std::string::npos);
  const auto before = stored(db, "117", 1);
  screen.tap("Save");   // nothing typed: nothing saved
  CHECK(stored(db, "117", 1) == before);
  for (const char* k : {"9", ".", "4"}) screen.tap(k);
  screen.tap("Save");
  REQUIRE(session->view().has_pending);
  screen.tap("Del");
  CHECK_FALSE(session->view().has_pending);
  CHECK(test::find_target(screen.state().targets, "Confirm value") == nullptr);
}

TEST_CASE("keyboard: digits, point, Backspace and Enter save; a scanned label with Enter opens the plot") {
  const std::string db = test::fresh_demo_trial("keyboard.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  REQUIRE(session->set_walk(WalkChoice{{"height_cm"}, 1, {}, false}).ok());
  HeadlessScreen screen(&*session, 1280, 800);
  screen.type_slowly("96");
  screen.press(kBackspaceKey);
  screen.type_slowly("5");
  CHECK(session->view().typed == "95");
  screen.press_enter();
  CHECK(stored(db, "101", 1) == "95");
  // A scanner: the whole label in one burst, then Enter.
  screen.type("307");
  screen.press_enter();
  CHECK(session->view().plot_label == "307");
  CHECK(session->view().typed.empty());
}

TEST_CASE("the keypad, Save and plot navigation do not move when the banner appears or changes") {
  const std::string db = test::demo_day_trial("still.furrow");
  for (auto [w, h] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    auto session = RecordSession::open(db, "Ana");
    REQUIRE(session.ok());
    session->set_trait(1);
    REQUIRE(session->jump_to("111").ok());
    HeadlessScreen screen(&*session, w, h);
    const auto fixed = [&] {
      std::vector<TapTarget> out;
      for (const char* l : {"7", "5", "Del", "0", "Save", "Previous plot", "Next plot", "Undo last entry", "Skip plot..."}) {
        const TapTarget* t = test::find_target(screen.state().targets, l);
        REQUIRE(t != nullptr);
        out.push_back(*t);
      }
      return out;
    };
    const auto before = fixed();
    for (const char* k : {"9", ".", "1"}) screen.tap(k);
    screen.tap("Save");   // a long warning banner with two answers
    REQUIRE(screen.state().tone == RecordScreenState::Tone::confirm);
    const auto asking = fixed();
    for (const char* k : {"4", "0", "0"}) screen.tap(k);
    screen.tap("Save");   // a refusal
    const auto refused = fixed();
    for (size_t i = 0; i < before.size(); ++i) {
      INFO(before[i].label << " in " << w << " x " << h);
      CHECK(asking[i].x0 == before[i].x0);
      CHECK(asking[i].y0 == before[i].y0);
      CHECK(refused[i].x0 == before[i].x0);
      CHECK(refused[i].y0 == before[i].y0);
    }
  }
}

TEST_CASE("keys typed while the walk chooser covers the value save nothing") {
  const std::string db = test::fresh_demo_trial("hidden_keys.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  HeadlessScreen screen(&*session, 1280, 800);
  screen.tap("Today's walk");
  screen.type_slowly("85");
  screen.press_enter();
  CHECK_FALSE(stored(db, "101", 0).has_value());
  CHECK(session->view().typed.empty());
}

TEST_CASE("a long typed value does not push the commands sideways; a skip says what it dropped and replaced") {
  const std::string db = test::demo_day_trial("long_value.furrow");
  auto session = RecordSession::open(db, "Ana");
  REQUIRE(session.ok());
  session->set_trait(1);
  REQUIRE(session->jump_to("309").ok());
  HeadlessScreen screen(&*session, 1280, 800);
  const TapTarget before = *test::find_target(screen.state().targets, "Previous plot");
  for (int i = 0; i < 14; ++i) screen.tap("8");
  const TapTarget after = *test::find_target(screen.state().targets, "Previous plot");
  CHECK(after.x0 == before.x0);
  CHECK(after.x1 == before.x1);
  for (const TapTarget& t : screen.state().targets) CHECK(t.x1 <= 1280.0f);
  screen.tap("Skip plot...");
  screen.tap("flooded");
  const std::string banner = screen.state().banner;
  CHECK(banner.find("typed on plot 309 was not saved") != std::string::npos);
  CHECK(banner.find("skipped plot 309: flooded") != std::string::npos);
  CHECK(banner.find("it held") != std::string::npos);
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
