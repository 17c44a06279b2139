#include "app/field/screens/widgets.h"

#include <imgui_internal.h>

#include <algorithm>

namespace furrow {

// A finger that moves this far (at scale 1) while down is scrolling, not tapping.
constexpr float kDragScrollPx = 12.0f;

ScreenWindow::ScreenWindow(const char* name, const Theme& t, float top_px,
                           std::initializer_list<std::pair<ImGuiCol, Rgb>> extra, ImGuiWindowFlags flags) {
  const ImGuiViewport* vp = ImGui::GetMainViewport();
  ImGui::SetNextWindowPos(ImVec2(vp->WorkPos.x, vp->WorkPos.y + top_px));
  ImGui::SetNextWindowSize(ImVec2(vp->WorkSize.x, vp->WorkSize.y - top_px));
  ImGui::PushStyleColor(ImGuiCol_WindowBg, to_imgui(t.background));
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(t.text));
  ImGui::PushStyleColor(ImGuiCol_TextDisabled, to_imgui(t.muted_text));   // hints in empty fields: 7:1 too
  for (const auto& [slot, colour] : extra) ImGui::PushStyleColor(slot, to_imgui(colour));
  colours_ = 3 + static_cast<int>(extra.size());
  ImGui::Begin(name, nullptr,
               ImGuiWindowFlags_NoDecoration | ImGuiWindowFlags_NoMove | ImGuiWindowFlags_NoSavedSettings | flags);
}

ScreenWindow::~ScreenWindow() {
  ImGui::End();
  ImGui::PopStyleColor(colours_);
}

void note_target(const std::string& label, std::vector<TapTarget>* targets) {
  const ImVec2 a = ImGui::GetItemRectMin(), b = ImGui::GetItemRectMax();
  targets->push_back({label, a.x, a.y, b.x, b.y});
}

bool solid_button(const char* label, ImVec2 size, const ButtonLook& look, std::vector<TapTarget>* targets,
                  const std::string& target_label) {
  for (ImGuiCol c : {ImGuiCol_Button, ImGuiCol_ButtonHovered, ImGuiCol_ButtonActive})
    ImGui::PushStyleColor(c, to_imgui(look.background));
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(look.text));
  ImGui::PushStyleColor(ImGuiCol_Border, to_imgui(look.border));
  ImGui::PushStyleVar(ImGuiStyleVar_FrameBorderSize, look.border_px);
  ImGui::PushStyleVar(ImGuiStyleVar_ButtonTextAlign, look.align_left ? ImVec2(0.0f, 0.5f) : ImVec2(0.5f, 0.5f));
  const bool pressed = ImGui::Button(label, size);
  ImGui::PopStyleVar(2);
  ImGui::PopStyleColor(5);
  note_target(target_label.empty() ? std::string(label) : target_label, targets);
  return pressed;
}

bool wrapped_button(const char* id, const std::string& text, float width, float min_height, const ButtonLook& look,
                    std::vector<TapTarget>* targets) {
  const ImVec2 pad = ImGui::GetStyle().FramePadding;
  const float wrap = width - 2 * pad.x;
  const ImVec2 size = ImGui::CalcTextSize(text.c_str(), nullptr, false, wrap);
  const float height = std::max(min_height, size.y + 2 * pad.y);
  const ImVec2 at = ImGui::GetCursorScreenPos();
  const bool pressed = ImGui::InvisibleButton(id, ImVec2(width, height));
  ImDrawList* dl = ImGui::GetWindowDrawList();
  dl->AddRectFilled(at, ImVec2(at.x + width, at.y + height), ImGui::ColorConvertFloat4ToU32(to_imgui(look.background)),
                    ImGui::GetStyle().FrameRounding);
  if (look.border_px > 0)
    dl->AddRect(at, ImVec2(at.x + width, at.y + height), ImGui::ColorConvertFloat4ToU32(to_imgui(look.border)),
                ImGui::GetStyle().FrameRounding, 0, look.border_px);
  const float text_x = look.align_left ? at.x + pad.x : at.x + (width - size.x) / 2;
  dl->AddText(ImGui::GetFont(), ImGui::GetFontSize(), ImVec2(text_x, at.y + (height - size.y) / 2),
              ImGui::ColorConvertFloat4ToU32(to_imgui(look.text)), text.c_str(), nullptr, wrap);
  note_target(text, targets);
  return pressed;
}

void drag_to_scroll(float scale) {
  if (ImGui::IsWindowHovered(ImGuiHoveredFlags_AllowWhenBlockedByActiveItem) &&
      ImGui::IsMouseDragging(ImGuiMouseButton_Left, kDragScrollPx * scale)) {
    ImGui::SetScrollX(ImGui::GetScrollX() - ImGui::GetIO().MouseDelta.x);
    ImGui::SetScrollY(ImGui::GetScrollY() - ImGui::GetIO().MouseDelta.y);
    ImGui::ClearActiveID();   // a drag is not a tap
  }
}

void flow_next(float next_width) {
  const float right = ImGui::GetWindowPos().x + ImGui::GetWindowContentRegionMax().x;
  ImGui::SameLine();
  if (ImGui::GetCursorScreenPos().x + next_width > right + 0.5f) ImGui::NewLine();
}

float button_width(const char* label, float scale) {
  return std::max(touch_px(scale), ImGui::CalcTextSize(label, nullptr, true).x + 2 * ImGui::GetStyle().FramePadding.x +
                                             16.0f * scale);
}

void banner(const char* text, const Rgb& background, const Rgb& foreground) {
  const ImVec2 pad = ImGui::GetStyle().FramePadding;
  const float width = ImGui::GetContentRegionAvail().x;
  const ImVec2 size = ImGui::CalcTextSize(text, nullptr, false, width - 2 * pad.x);
  const ImVec2 at = ImGui::GetCursorScreenPos();
  ImGui::GetWindowDrawList()->AddRectFilled(at, ImVec2(at.x + width, at.y + size.y + 2 * pad.y),
                                            ImGui::ColorConvertFloat4ToU32(to_imgui(background)));
  ImGui::SetCursorScreenPos(ImVec2(at.x + pad.x, at.y + pad.y));
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(foreground));
  ImGui::PushTextWrapPos(at.x + width - pad.x - ImGui::GetWindowPos().x);
  ImGui::TextUnformatted(text);
  ImGui::PopTextWrapPos();
  ImGui::PopStyleColor();
  ImGui::SetCursorScreenPos(ImVec2(at.x, at.y + size.y + 2 * pad.y + ImGui::GetStyle().ItemSpacing.y));
  ImGui::Dummy(ImVec2(0, 0));
}

}  // namespace furrow
