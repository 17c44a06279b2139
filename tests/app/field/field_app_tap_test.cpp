// The real field app (every screen, the navigation bar, settings) driven
// headlessly by random taps and keys, against an independent model of what
// the crew saw. The model knows only what it sent and what the screen showed:
//   - the text the crew typed belongs to the cell (plot, trait, occasion)
//     shown while typing; when the screen shows another cell, or the crew
//     leaves the Record screen, nothing is typed any more;
//   - keypad digits, the point and keyboard keys append to it; Del and
//     Backspace take one character off; taking a slip's suggestion puts it in
//     place of the typed text; a saved value, a skip or an Undo that writes
//     clears it.
// Invariant: every row the log gains comes from one tap of Save, Confirm
// value, the slip's suggestion or Enter (a value: exactly the model's typed
// text, or the suggestion tapped, normalised as the trait stores it, on the
// plot, trait and occasion on screen at that tap), a skip reason (a missing
// value on that cell), Value is right (the cell's value again) or Undo;
// nothing else writes. And the screen always shows the model's typed text.

#include <doctest/doctest.h>
#include <imgui.h>

#include <cstdlib>
#include <filesystem>
#include <map>

#include "app/field/field_app_state.h"
#include "core/random_stream.h"
#include "storage/trial_store.h"
#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

constexpr int kEnterKey = 257, kBackspaceKey = 259;

struct Row {
  std::string plot, trait;
  int occasion = 1;
  std::optional<std::string> value, missing;
};

// Rows this device added after `after` (its own sequence numbers).
std::vector<Row> rows_after(const std::string& db, std::int64_t after, std::int64_t* last) {
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  auto s = open->db.prepare(
      "SELECT o.sequence, p.label, t.code, o.occasion, o.value, o.missing_reason FROM observation o "
      "JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
      "WHERE o.device_id = (SELECT device_id FROM this_device) AND o.sequence > ? ORDER BY o.sequence");
  REQUIRE(s.ok());
  s->bind(1, after);
  std::vector<Row> out;
  while (s->step()) {
    *last = s->integer(0);
    out.push_back({s->text(1), s->text(2), static_cast<int>(s->integer(3)), s->optional_text(4), s->optional_text(5)});
  }
  return out;
}

struct Cell {
  std::string plot, trait;
  int occasion = 1;
  bool operator==(const Cell&) const = default;
};

class TapRun {
 public:
  TapRun(const std::string& db, const std::string& folder, std::uint64_t seed)
      : db_(db), random_(seed), options_{db, "", "Ana"} {
    Settings settings;
    settings.observer = "Ana";
    app_ = FieldAppState::create(options_, settings, "", folder);
    REQUIRE(app_->open_trial(db).ok());
    app_->set_screen(Screen::record);
    ui_ = std::make_unique<test::HeadlessImGui>(1280.0f, 800.0f, [this] {
      ImGui::GetIO().FontGlobalScale = scale_;
      if (auto changed = app_->draw(scale_)) {
        app_->apply_settings(*changed);
        scale_ = static_cast<float>(changed->ui_scale);
      }
    });
    ImGuiIO& io = ImGui::GetIO();
    io.KeyMap[ImGuiKey_Enter] = kEnterKey;
    io.KeyMap[ImGuiKey_Backspace] = kBackspaceKey;
    ui_->frame();
    rows_after(db_, 0, &last_sequence_);
    observe();
  }

  // What the screen shows now; the model forgets typed text when the cell or
  // the screen changes.
  void observe() {
    const RecordSession* s = app_->session();
    const RecordView v = s->view();
    const Cell shown{v.plot_label, v.trait_code, v.occasion};
    if (!(shown == cell_) || app_->screen() != Screen::record) typed_.clear();
    cell_ = shown;
    if (app_->screen() == Screen::record) {
      INFO("step " << step_ << ": screen shows '" << v.typed << "', the crew typed '" << typed_ << "'");
      REQUIRE(v.typed == typed_);
    }
  }

  void step() {
    ++step_;
    const RecordView before = app_->session()->view();
    const Cell at_tap = cell_;
    const std::string typed_at_tap = typed_;
    std::string action, tapped;
    std::string suggestion = before.suggestion;
    const int pick = static_cast<int>(random_.below(100));
    ImGuiIO& io = ImGui::GetIO();
    // Keys reach the Record screen only while it is drawn (not under the
    // list of screens that large text opens).
    const bool record_shown = app_->screen() == Screen::record && test::find_target(app_->targets(), "Save");
    if (pick < 8 && record_shown && !io.WantTextInput) {
      // A keyboard key.
      const int k = static_cast<int>(random_.below(14));
      if (k < 10) {
        action = "key digit";
        const char c[2] = {static_cast<char>('0' + k), 0};
        io.AddInputCharactersUTF8(c);
        typed_ += c;
        frames(4);
      } else if (k == 10) {
        action = "key point";
        io.AddInputCharactersUTF8(".");
        typed_ += ".";
        frames(4);
      } else if (k == 11) {
        action = "key backspace";
        press(kBackspaceKey);
        if (!typed_.empty()) typed_.pop_back();
      } else if (k == 12) {
        action = "key enter";
        press(kEnterKey);
      } else {
        action = "scan";
        const auto& plots = app_->session()->trial().layout.plots;
        const std::string label = plots[random_.below(plots.size())].label;
        io.AddInputCharactersUTF8(label.c_str());
        ui_->frame();
        press(kEnterKey);
      }
    } else if (pick < 16) {
      // A finger dragged up or down: scrolls, taps nothing.
      action = "drag";
      const float x = 200.0f + static_cast<float>(random_.below(800)), y = 300.0f + static_cast<float>(random_.below(300));
      const float dy = random_.below(2) ? 25.0f : -25.0f;
      io.MousePos = ImVec2(x, y);
      ui_->frame();
      io.MouseDown[0] = true;
      ui_->frame();
      for (int i = 0; i < 8; ++i) {
        io.MousePos.y += dy;
        ui_->frame();
      }
      io.MouseDown[0] = false;
      frames(2);
    } else if (pick < 18) {
      action = "text size";
      const float sizes[] = {0.75f, 1.0f, 1.5f, 2.0f, 3.0f};
      scale_ = sizes[random_.below(5)];
      frames(2);
    } else {
      // A tap on anything the screen drew (not the Trials and Station screens,
      // which open other files).
      // Only what a finger can reach: a screen's item scrolled under the
      // navigation bar is hidden by it.
      const std::vector<TapTarget> all = app_->targets();
      const char* tabs[] = {"Trials", "Record", "Field map", "Check", "Before leaving", "Station", "Settings", "Help",
                            "Screens"};
      float nav_bottom = 0;
      for (const TapTarget& t : all)
        if (std::find(std::begin(tabs), std::end(tabs), t.label) != std::end(tabs)) nav_bottom = std::max(nav_bottom, t.y1);
      std::vector<TapTarget> targets;
      for (const TapTarget& t : all) {
        const bool tab = std::find(std::begin(tabs), std::end(tabs), t.label) != std::end(tabs);
        const float cx = (t.x0 + t.x1) / 2, cy = (t.y0 + t.y1) / 2;
        if (t.label == "Trials" || t.label == "Station" || cx < 0 || cy < 0 || cx > 1280 || cy > 800) continue;
        if (!tab && t.y0 < nav_bottom + ImGui::GetStyle().WindowPadding.y * scale_ + 2) continue;
        targets.push_back(t);
      }
      if (targets.empty()) return;
      // The keypad and Save more often than the rest, as a crew taps them.
      const TapTarget* t = nullptr;
      if (app_->screen() == Screen::record && random_.below(3) != 0) {
        const char* keys[] = {"0", "1", "2", "3", "4", "5", "6", "7", "8", "9", ".", "Del", "Save", "Confirm value",
                              "Save suggestion", "Next plot", "Previous plot"};
        // Short values are saved more often than long ones are typed.
        const bool asked = test::find_target(targets, "Confirm value") != nullptr;
        const char* key = asked && random_.below(3) == 0          ? (random_.below(2) ? "Confirm value" : "Save suggestion")
                          : typed_.size() >= 2 && random_.below(3) == 0 ? "Save"
                          : typed_.size() > 4 && random_.below(2) == 0 ? "Del"
                                                                         : keys[random_.below(std::size(keys))];
        t = test::find_target(targets, key);
      } else if (app_->screen() != Screen::record && random_.below(3) == 0) {
        t = test::find_target(targets, "Record");   // back to the walk
      }
      if (!t) t = &targets[random_.below(targets.size())];
      action = "tap " + t->label + " @" + std::to_string(int(t->x0)) + "," + std::to_string(int(t->y0)) + "-" +
               std::to_string(int(t->x1)) + "," + std::to_string(int(t->y1)) + " s" + std::to_string(scale_) +
               (io.WantTextInput ? " text-input" : "");
      const TapTarget target = *t;
      tapped = t->label;
      ui_->tap(target);
      // Keypad taps append to what the crew typed (only the Record screen has a keypad).
      const std::string& l = target.label;
      if (at_record_ && l.size() == 1 && ((l[0] >= '0' && l[0] <= '9') || l[0] == '.')) typed_ += l;
      if (at_record_ && l == "Del" && !typed_.empty()) typed_.pop_back();
      // Taking the suggestion puts it on screen in place of the typed text
      // (it is then checked like any entry, and may itself be asked about).
      if (at_record_ && l == "Save suggestion" && !suggestion.empty()) typed_ = suggestion;
    }
    // A finger takes longer than two frames between taps: let the layout
    // settle (a closed panel shortens the page and ImGui clamps the scroll
    // one frame later).
    frames(2);
    // The log: what this action wrote.
    const auto rows = rows_after(db_, last_sequence_, &last_sequence_);
    history_.push_back(action);
    if (!tapped.empty()) action = "tap " + tapped;
    if (history_.size() > 6) history_.erase(history_.begin());
    std::string recent;
    for (const auto& h : history_) recent += h + " | ";
    INFO("recent: " << recent);
    INFO("step " << step_ << " (" << action << ") at plot " << at_tap.plot << " " << at_tap.trait << " #"
                 << at_tap.occasion << ", typed '" << typed_at_tap << "'");
    CHECK(rows.size() <= 1);
    for (const Row& r : rows) {
      INFO("row: plot " << r.plot << " " << r.trait << " #" << r.occasion << " = " << r.value.value_or("-")
                        << " missing " << r.missing.value_or("-"));
      const bool on_cell = r.plot == at_tap.plot && r.trait == at_tap.trait && r.occasion == at_tap.occasion;
      if (action == "tap Save" || action == "tap Confirm value" || action == "key enter") {
        CHECK(on_cell);
        CHECK(r.value == normalised(at_tap.trait, typed_at_tap));
        typed_.clear();   // saved: nothing typed any more
        ++saved_;
      } else if (action == "tap Save suggestion") {
        CHECK(on_cell);
        CHECK(!suggestion.empty());
        CHECK(r.value == normalised(at_tap.trait, suggestion));
        typed_.clear();
        ++saved_;
      } else if (action == "tap Value is right") {
        CHECK(on_cell);
        CHECK(r.value == before.current);
      } else if (action.rfind("tap ", 0) == 0 && is_skip_reason(action.substr(4))) {
        CHECK(on_cell);
        typed_.clear();   // a skip is what was saved, not the typed text
        CHECK(r.missing == action.substr(4));
      } else if (action == "tap Skip with this note") {
        CHECK(on_cell);
        typed_.clear();
        CHECK(r.missing == "other");
      } else if (action == "tap Undo last entry") {
        typed_.clear();   // undo leaves the cell (rule E1)
      } else if (action == "tap Keep note") {
        // A note re-saves the cell's value with it.
      } else {
        FAIL_CHECK("a row was written by " << action);
      }
    }
    at_record_ = app_->screen() == Screen::record;
    observe();
  }

  int saved() const { return saved_; }

 private:
  void frames(int n) {
    for (int i = 0; i < n; ++i) ui_->frame();
  }
  void press(int key) {
    ImGuiIO& io = ImGui::GetIO();
    io.KeysDown[key] = true;
    ui_->frame();
    io.KeysDown[key] = false;
    frames(2);
  }
  std::optional<std::string> normalised(const std::string& trait_code, const std::string& text) const {
    for (const Trait& t : app_->session()->trial().plan.traits)
      if (t.code == trait_code) {
        auto p = parse_trait_value(t, text);
        if (p) return p->text;
      }
    return std::nullopt;
  }
  static bool is_skip_reason(const std::string& s) {
    return std::find(kSkipReasons.begin(), kSkipReasons.end(), s) != kSkipReasons.end() && s != "other";
  }

  std::string db_;
  RandomStream random_;
  FieldAppOptions options_;
  std::unique_ptr<FieldAppState> app_;
  std::unique_ptr<test::HeadlessImGui> ui_;
  float scale_ = 1.0f;
  std::int64_t last_sequence_ = 0;
  Cell cell_;
  std::string typed_;
  bool at_record_ = true;
  int step_ = 0, saved_ = 0;
  std::vector<std::string> history_;
};

TEST_CASE("100,000 random taps and keys on the real screens save exactly what the crew saw") {
  // FURROW_TAP_STEPS overrides the count (a quick look while developing).
  const char* env = std::getenv("FURROW_TAP_STEPS");
  const int total = env ? std::atoi(env) : 100000;
  constexpr int kRuns = 4;   // fresh trials, so that every run starts with plots to fill
  int saved = 0;
  for (int run = 0; run < kRuns; ++run) {
    const auto dir = test::scratch_dir("taps_" + std::to_string(run));
    std::filesystem::remove_all(dir);
    std::filesystem::create_directories(dir);
    const std::string db = test::demo_day_trial("taps" + std::to_string(run) + ".furrow");
    TapRun r(db, dir.string(), 20261202 + run);
    for (int i = 0; i < total / kRuns; ++i) {
      r.step();
      if (i % 5000 == 4999) MESSAGE("run " << run << ": " << i + 1 << " steps, " << r.saved() << " values saved");
    }
    saved += r.saved();
  }
  MESSAGE(total << " steps, " << saved << " values saved");
  CHECK(saved > total / 250);   // the run reached the saving paths, not only the menus
}

}  // namespace
}  // namespace furrow
