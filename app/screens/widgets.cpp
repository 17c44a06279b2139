#include "app/screens/widgets.h"

#include <imgui_internal.h>

namespace furrow {

// A finger that moves this far (at scale 1) while down is scrolling, not tapping.
constexpr float kDragScrollPx = 12.0f;

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

void drag_to_scroll(float scale) {
  if (ImGui::IsWindowHovered(ImGuiHoveredFlags_AllowWhenBlockedByActiveItem) &&
      ImGui::IsMouseDragging(ImGuiMouseButton_Left, kDragScrollPx * scale)) {
    ImGui::SetScrollY(ImGui::GetScrollY() - ImGui::GetIO().MouseDelta.y);
    ImGui::ClearActiveID();   // a drag is not a tap
  }
}

}  // namespace furrow
