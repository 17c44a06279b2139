#pragma once
// A Dear ImGui context without a window for driving real screens in tests:
// the display size, a built font atlas, and a finger that taps a rectangle
// (position, press, release, then the frame that shows the outcome), as the
// platform would deliver it (PLATFORM-NOTES.md).

#include <imgui.h>

#include <functional>

#include "app/field/screens/record_screen.h"

namespace furrow::test {

class HeadlessImGui {
 public:
  // `draw` runs one screen's frame body between NewFrame and Render.
  HeadlessImGui(float width, float height, std::function<void()> draw) : draw_(std::move(draw)) {
    ImGui::CreateContext();
    ImGuiIO& io = ImGui::GetIO();
    io.IniFilename = nullptr;
    io.DisplaySize = ImVec2(width, height);
    io.DeltaTime = 1.0f / 60.0f;
    unsigned char* pixels = nullptr;
    int w = 0, h = 0;
    io.Fonts->GetTexDataAsRGBA32(&pixels, &w, &h);
  }
  ~HeadlessImGui() { ImGui::DestroyContext(); }
  HeadlessImGui(const HeadlessImGui&) = delete;
  HeadlessImGui& operator=(const HeadlessImGui&) = delete;

  void frame() {
    ImGui::NewFrame();
    draw_();
    ImGui::Render();
  }

  void tap(const TapTarget& t) {
    ImGuiIO& io = ImGui::GetIO();
    io.MousePos = ImVec2((t.x0 + t.x1) / 2, (t.y0 + t.y1) / 2);
    frame();
    io.MouseDown[0] = true;
    frame();
    io.MouseDown[0] = false;
    frame();
    frame();   // the frame that shows the outcome, as the app draws it
  }

 private:
  std::function<void()> draw_;
};

// The item with this label among the targets, or nullptr.
inline const TapTarget* find_target(const std::vector<TapTarget>& targets, const std::string& label) {
  for (const TapTarget& t : targets)
    if (t.label == label) return &t;
  return nullptr;
}

}  // namespace furrow::test
