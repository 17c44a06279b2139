#include "app/field/field_app.h"

#include <imgui.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <iostream>
#include <vector>

#include "app/field/field_app_state.h"
#include "app/field/settings.h"
#include "platform/app_window.h"
#include "platform/data_folder.h"

namespace furrow {
namespace {

using Clock = std::chrono::steady_clock;

// While nothing happens the loop sleeps in the window system this long at a
// time: short enough that a change made by another program (a merge, a
// settlement) shows within a second, long enough to cost no battery.
constexpr double kIdleWaitSeconds = 0.5;
// Frames drawn without waiting after any input (see the main loop).
constexpr int kFramesAfterInput = 3;
// Frames drawn before a screenshot, so that fonts and layout have settled.
constexpr int kScreenshotFrames = 3;

void write_targets(const std::string& path, const std::vector<TapTarget>& targets, std::string* last) {
  std::string text;
  char buf[96];
  for (const TapTarget& t : targets) {
    std::snprintf(buf, sizeof buf, "%.0f %.0f %.0f %.0f ", t.x0, t.y0, t.x1, t.y1);
    text += buf + t.label + "\n";
  }
  if (text == *last) return;
  *last = text;
  const std::string tmp = path + ".tmp";
  if (FILE* f = std::fopen(tmp.c_str(), "w")) {
    std::fwrite(text.data(), 1, text.size(), f);
    std::fclose(f);
    std::rename(tmp.c_str(), path.c_str());
  }
}

void print_frame_times(std::vector<double> ms, double first_frame_ms) {
  std::sort(ms.begin(), ms.end());
  const auto at = [&](double q) { return ms[static_cast<size_t>(q * (ms.size() - 1))]; };
  std::printf("start to first drawn frame: %.1f ms\nframes: %zu  median %.2f ms  p95 %.2f ms  max %.2f ms\n",
              first_frame_ms, ms.size(), at(0.5), at(0.95), ms.back());
}

}  // namespace

int run_field_app(const FieldAppOptions& o) {
  const auto started = Clock::now();
  Settings settings;
  std::string settings_path, folder;
  if (auto f = data_folder()) {
    folder = *f;
    settings_path = folder + "/settings.json";
    auto loaded = load_settings(settings_path);
    if (loaded) settings = *loaded;
    else std::cerr << loaded.problem().message << " (using the defaults)\n";
  } else {
    std::cerr << f.problem().message << "\n";
  }
  if (settings.observer.empty()) settings.observer = o.observer;
  const auto state = FieldAppState::create(o, settings, settings_path, folder);
  FieldAppState& app = *state;
  app.set_screen(screen_named(o.start_screen));
  if (!o.db.empty()) {
    if (auto s = app.open_trial(o.db); !s) {
      std::cerr << s.problem().message << "\n";
      return 2;
    }
  } else {
    app.set_screen(Screen::trials);
  }
  auto window = AppWindow::create(app.has_trial() ? "Furrow - " + app.trial_name() : "Furrow", o.width, o.height,
                                  static_cast<float>(settings.ui_scale));
  if (!window) {
    std::cerr << window.problem().message << "\n";
    return 1;
  }
  std::string last_targets;
  int frames = 0, eager_frames = 0;
  const bool waits = o.screenshot.empty() && o.bench_frames == 0;
  std::vector<double> frame_ms;
  double first_frame_ms = 0;
  while (!(*window)->should_close()) {
    const auto frame_start = Clock::now();
    (*window)->begin_frame(waits && frames > 1 && eager_frames == 0 && !app.busy() ? kIdleWaitSeconds : 0.0);
    // A tap's press and release can arrive together: keep drawing a few
    // frames after any input so that the release (and what it changes) is
    // handled at once, not at the next event.
    {
      const ImGuiIO& io = ImGui::GetIO();
      bool input = io.MouseDelta.x != 0 || io.MouseDelta.y != 0 || io.MouseWheel != 0 || !io.InputQueueCharacters.empty();
      for (bool down : io.MouseDown) input = input || down;
      for (bool down : io.KeysDown) input = input || down;
      eager_frames = input ? kFramesAfterInput : std::max(0, eager_frames - 1);
    }
    const auto changed = app.draw((*window)->scale());
    const Theme& theme = app.theme();
    (*window)->end_frame(theme.background.r, theme.background.g, theme.background.b);
    if (changed) {
      const bool rescale = changed->ui_scale != app.settings().ui_scale;
      app.apply_settings(*changed);
      if (rescale) (*window)->set_ui_scale(static_cast<float>(changed->ui_scale));
    }
    if (app.has_trial()) (*window)->set_title("Furrow - " + app.trial_name());
    if (!o.targets_out.empty()) write_targets(o.targets_out, app.targets(), &last_targets);
    ++frames;
    const auto now = Clock::now();
    if (frames == 1) first_frame_ms = std::chrono::duration<double, std::milli>(now - started).count();
    if (o.bench_frames > 0) {
      if (frames > kScreenshotFrames) frame_ms.push_back(std::chrono::duration<double, std::milli>(now - frame_start).count());
      if (frames >= o.bench_frames + kScreenshotFrames) {
        print_frame_times(frame_ms, first_frame_ms);
        std::printf("scale: %.2f (screen content scale %.2f x UI scale %.2f)\n", (*window)->scale(),
                    (*window)->content_scale(), app.settings().ui_scale);
        return 0;
      }
    }
    if (!o.screenshot.empty() && frames >= kScreenshotFrames) {
      if (auto s = (*window)->save_screenshot(o.screenshot); !s) {
        std::cerr << s.problem().message << "\n";
        return 1;
      }
      return 0;
    }
  }
  return 0;
}

}  // namespace furrow
