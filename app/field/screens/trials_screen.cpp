#include "app/field/screens/trials_screen.h"

#include <imgui.h>

#include <algorithm>

#include <cstdio>
#include <filesystem>
#include <string>

#include "app/field/screens/widgets.h"

namespace furrow {
namespace {

// "2026-05-02T10:11:12.000Z" as "2026-05-02 10:11 UTC".
std::string readable_time(const std::string& iso) {
  if (iso.size() < 16) return iso;
  return iso.substr(0, 10) + " " + iso.substr(11, 5) + " UTC";
}

}  // namespace

std::optional<TrialsAction> draw_trials_screen(const TrialsView& v, const Theme& t, float scale, float top_px,
                                               TrialsScreenState* st) {
  st->targets.clear();
  std::optional<TrialsAction> action;
  const ScreenWindow window("Trials", t, top_px, {{ImGuiCol_FrameBg, t.panel}});
  drag_to_scroll(scale);   // the whole screen scrolls by dragging
  const float h = touch_px(scale);
  const float width = ImGui::GetContentRegionAvail().x;
  if (!st->message.empty())
    banner(st->message.c_str(), st->message_is_problem ? t.refuse : t.saved,
           st->message_is_problem ? t.refuse_text : t.saved_text);
  if (st->question) {
    // The question first; nothing else is offered until it is answered.
    banner(st->question->text.c_str(), t.confirm, t.confirm_text);
    for (const auto& [label, answer] : st->question->answers) {
      const float w = std::min(width, button_width(label.c_str(), scale));
      flow_next(w);
      if (solid_button(label.c_str(), ImVec2(w, h), ButtonLook{t.button, t.button_text}, &st->targets))
        action = answer;
    }
    ImGui::Dummy(ImVec2(0, h));
    return action;
  }
  ImGui::TextWrapped("Trials on this device (%s). Tap a trial to open it.", v.folder.c_str());
  if (v.trials.empty())
    ImGui::TextWrapped(v.demo_available ? "No trials here yet: open the demo trial or create one from a plan file."
                                        : "No trials here yet: create one from a plan file.");
  for (size_t i = 0; i < v.trials.size(); ++i) {
    const TrialSummary& s = v.trials[i];
    char text[700];
    if (s.problem.empty())
      std::snprintf(text, sizeof text, "%s%s\n%s, %d plots, %d traits; %s%s\n%.0f %% collected, last change %s##t%zu",
                    s.name.c_str(), s.path == v.current ? "  (open now)" : "", s.design.c_str(), s.plots, s.traits,
                    s.file_name.c_str(),
                    std::filesystem::path(s.path).parent_path() == std::filesystem::path(v.folder) ? ""
                                                                                                    : " (elsewhere)",
                    s.progress.percent(), readable_time(s.progress.last_change).c_str(), i);
    else
      std::snprintf(text, sizeof text, "%s\ncannot be read: %s##t%zu", s.file_name.c_str(), s.problem.c_str(), i);
    ButtonLook look = s.path == v.current ? ButtonLook{t.accent, t.accent_text} : ButtonLook{t.panel, t.text};
    look.align_left = true;
    look.border_px = 2.0f * scale;   // a pale row needs an edge on the page
    look.border = t.text;
    const float remove_w = button_width("Remove", scale);
    const float row_w = std::max(touch_px(scale), width - remove_w - ImGui::GetStyle().ItemSpacing.x);
    if (solid_button(text, ImVec2(row_w, 2.2f * h), look, &st->targets, "trial " + s.file_name) && s.problem.empty())
      action = TrialsAction{TrialsAction::Kind::open, s.path};
    flow_next(remove_w);
    ButtonLook remove_look{t.background, t.text};
    remove_look.border_px = 2.0f * scale;
    remove_look.border = t.text;
    if (solid_button(("Remove##r" + std::to_string(i)).c_str(), ImVec2(remove_w, 2.2f * h), remove_look, &st->targets,
                     "remove " + s.file_name))
      action = TrialsAction{TrialsAction::Kind::remove, s.path};
  }
  ImGui::Spacing();
  if (v.demo_available &&
      solid_button("Open the demo trial", ImVec2(button_width("Open the demo trial", scale), h),
                   ButtonLook{t.button, t.button_text}, &st->targets))
    action = TrialsAction{TrialsAction::Kind::open_demo, {}};

  ImGui::Spacing();
  ImGui::TextWrapped("New trial from a plan file: tap a plan file found in the folder, or type its path. Type the "
                     "path of a station's trial file (.furrow) to make this device's own copy of it.");
  for (size_t i = 0; i < v.plan_files.size(); ++i) {
    const std::string name = std::filesystem::path(v.plan_files[i]).filename().string();
    ButtonLook look{t.panel, t.text};
    look.align_left = true;
    look.border_px = 2.0f * scale;
    look.border = t.text;
    if (solid_button(("Create from " + name + "##p" + std::to_string(i)).c_str(), ImVec2(width, h), look,
                     &st->targets, "plan " + name))
      action = TrialsAction{TrialsAction::Kind::create_from_plan, v.plan_files[i]};
  }
  const float create_w = button_width("Create", scale);
  ImGui::PushItemWidth(std::max(4 * h, width - create_w - ImGui::GetStyle().ItemSpacing.x));
  // Taller field: the frame padding sets a text field's height.
  ImGui::PushStyleVar(ImGuiStyleVar_FramePadding,
                      ImVec2(ImGui::GetStyle().FramePadding.x, (h - ImGui::GetFontSize()) / 2));
  const bool entered = ImGui::InputTextWithHint("##planpath", "path of a plan file (.csv) or a station's trial (.furrow)", st->plan_path,
                                                sizeof st->plan_path, ImGuiInputTextFlags_EnterReturnsTrue);
  note_target("plan path", &st->targets);
  ImGui::PopStyleVar();
  ImGui::PopItemWidth();
  ImGui::SameLine();
  if ((solid_button("Create", ImVec2(create_w, h), ButtonLook{t.button, t.button_text}, &st->targets) || entered) &&
      st->plan_path[0])
    action = TrialsAction{TrialsAction::Kind::create_from_plan, st->plan_path};
  ImGui::Dummy(ImVec2(0, h));
  return action;
}

}  // namespace furrow
