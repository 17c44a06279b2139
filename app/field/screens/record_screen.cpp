#include "app/field/screens/record_screen.h"

#include <imgui.h>

#include <algorithm>

#include "app/field/screens/widgets.h"

namespace furrow {
namespace {

// Keypad keys are larger than the minimum: gloves and one free hand.
constexpr float kKeyPx = 72.0f;

bool big_button(const char* label, float width, float height, const Rgb& bg, const Rgb& fg, RecordScreenState* st) {
  return solid_button(label, ImVec2(width, height), ButtonLook{bg, fg}, &st->targets);
}

}  // namespace

void show_outcome(const EntryOutcome& outcome, RecordScreenState* state) {
  state->banner = outcome.message;
  switch (outcome.kind) {
    case EntryOutcome::Kind::saved: state->tone = RecordScreenState::Tone::saved; state->typed.clear(); break;
    case EntryOutcome::Kind::needs_confirmation: state->tone = RecordScreenState::Tone::confirm; break;
    case EntryOutcome::Kind::refused: state->tone = RecordScreenState::Tone::refuse; break;
  }
}

void apply_record_command(const RecordCommand& c, RecordSession& s, RecordScreenState* ui) {
  auto show_status = [&](const Status& st, const std::string& done) {
    ui->banner = st ? done : st.problem().message;
    ui->tone = st ? RecordScreenState::Tone::saved : RecordScreenState::Tone::refuse;
  };
  switch (c.kind) {
    case RecordCommand::Kind::enter: show_outcome(s.enter(c.text), ui); break;
    case RecordCommand::Kind::confirm: show_outcome(s.confirm(), ui); break;
    case RecordCommand::Kind::skip: show_status(s.skip(c.text, ""), "skipped: " + c.text); break;
    case RecordCommand::Kind::next: s.next(); ui->tone = RecordScreenState::Tone::none; break;
    case RecordCommand::Kind::previous: s.previous(); ui->tone = RecordScreenState::Tone::none; break;
    case RecordCommand::Kind::jump: show_status(s.jump_to(c.text), "plot " + c.text); break;
    case RecordCommand::Kind::undo: show_status(s.undo(), "the last entry was undone (a new log row)"); break;
  }
}

std::vector<RecordCommand> draw_record_screen(const RecordView& v, const Theme& theme, float scale,
                                              RecordScreenState* st, float top_px) {
  std::vector<RecordCommand> out;
  st->targets.clear();
  const ImGuiViewport* vp = ImGui::GetMainViewport();
  const ScreenWindow window("Record", theme, top_px,
                            {{ImGuiCol_FrameBg, theme.panel},
                             {ImGuiCol_FrameBgActive, theme.panel},
                             {ImGuiCol_FrameBgHovered, theme.panel},
                             {ImGuiCol_Border, theme.text}});
  const float target = kTouchTargetPx * scale;
  const float key = kKeyPx * scale;
  const float width = ImGui::GetContentRegionAvail().x;
  const bool portrait = vp->WorkSize.y > vp->WorkSize.x;

  // Where we are.
  ImGuiIO& io = ImGui::GetIO();
  ImFont* large = io.Fonts->Fonts.Size > 2 ? io.Fonts->Fonts[1] : ImGui::GetFont();
  ImFont* huge = io.Fonts->Fonts.Size > 2 ? io.Fonts->Fonts[2] : ImGui::GetFont();
  ImGui::PushFont(huge);
  ImGui::Text("Plot %s", v.plot_label.c_str());
  ImGui::PopFont();
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(theme.muted_text));
  ImGui::Text("%s%sblock %d   row %d   column %d   %s   (%d of %d)", v.site.c_str(), v.site.empty() ? "" : "   ",
              v.block, v.row, v.column, v.treatment.c_str(), v.position, v.plots);
  ImGui::PopStyleColor();
  ImGui::Separator();
  ImGui::PushFont(large);
  ImGui::Text("%s%s%s%s", v.trait_name.c_str(), v.unit.empty() ? "" : " (", v.unit.c_str(), v.unit.empty() ? "" : ")");
  ImGui::PopFont();
  if (!v.limits.empty()) ImGui::Text("%s", v.limits.c_str());
  ImGui::Text("Recorded: %s", v.current ? v.current->c_str() : "nothing yet");
  ImGui::Text("Done %d of %d required values", v.cells_done, v.cells_required);

  // Banner with what the checks said, as tall as its text (and the Confirm
  // button when a value waits for it). In landscape it heads the right-hand
  // column, so that the keypad never moves under the finger; in portrait it
  // sits above the keypad.
  const auto draw_banner = [&](float w) {
    if (st->tone == RecordScreenState::Tone::none) return;
    const Rgb bg = st->tone == RecordScreenState::Tone::saved     ? theme.saved
                   : st->tone == RecordScreenState::Tone::confirm ? theme.confirm
                                                                  : theme.refuse;
    const Rgb fg = st->tone == RecordScreenState::Tone::saved     ? theme.saved_text
                   : st->tone == RecordScreenState::Tone::confirm ? theme.confirm_text
                                                                  : theme.refuse_text;
    const bool confirm = st->tone == RecordScreenState::Tone::confirm && v.has_pending;
    const ImVec2 pad = ImGui::GetStyle().WindowPadding;
    const float text_h = ImGui::CalcTextSize(st->banner.c_str(), nullptr, false, w - 2 * pad.x).y;
    const float h = text_h + 2 * pad.y + (confirm ? 1.5f * target + ImGui::GetStyle().ItemSpacing.y : 0.0f);
    ImGui::PushStyleColor(ImGuiCol_ChildBg, to_imgui(bg));
    ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(fg));
    ImGui::BeginChild("banner", ImVec2(w, h), false,
                      ImGuiWindowFlags_NoScrollbar | ImGuiWindowFlags_AlwaysUseWindowPadding);
    ImGui::PushTextWrapPos(0.0f);
    ImGui::TextUnformatted(st->banner.c_str());
    ImGui::PopTextWrapPos();
    const float confirm_w = std::min(5 * target, w - 2 * pad.x);
    if (confirm && big_button("Confirm value", confirm_w, 1.5f * target, theme.button, theme.button_text, st))
      out.push_back({RecordCommand::Kind::confirm, {}});
    ImGui::EndChild();
    ImGui::PopStyleColor(2);
  };
  if (portrait) draw_banner(width);

  // The value being typed and the keypad.
  ImGui::PushFont(huge);
  ImGui::Text("Value: %s_", st->typed.c_str());
  ImGui::PopFont();
  static const char* kKeys[4][3] = {{"7", "8", "9"}, {"4", "5", "6"}, {"1", "2", "3"}, {".", "0", "Del"}};
  const float pad_width = 3 * key + 2 * ImGui::GetStyle().ItemSpacing.x;
  ImGui::BeginGroup();
  for (auto& row : kKeys) {
    for (int c = 0; c < 3; ++c) {
      if (c) ImGui::SameLine();
      if (big_button(row[c], key, key, theme.button, theme.button_text, st)) {
        if (std::string(row[c]) == "Del") {
          if (!st->typed.empty()) st->typed.pop_back();
        } else {
          st->typed += row[c];
        }
      }
    }
  }
  if (big_button("Save", pad_width, key, theme.accent, theme.accent_text, st) && !st->typed.empty())
    out.push_back({RecordCommand::Kind::enter, st->typed});
  ImGui::EndGroup();

  // Moving along and other commands.
  if (!portrait) ImGui::SameLine(0, 2 * target);
  ImGui::BeginGroup();
  const float cmd = 4.5f * target;
  if (!portrait) draw_banner(2 * cmd + ImGui::GetStyle().ItemSpacing.x);
  if (big_button("Previous plot", cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::previous, {}});
  ImGui::SameLine();
  if (big_button("Next plot", cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::next, {}});
  if (big_button("Undo last entry", cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::undo, {}});
  ImGui::SameLine();
  if (big_button("Skip plot...", cmd, target * 1.3f, theme.button, theme.button_text, st))
    st->choosing_skip_reason = !st->choosing_skip_reason;
  if (st->choosing_skip_reason) {
    for (const std::string& reason : kSkipReasons) {
      if (reason == "other") continue;   // needs a note: typed on the keyboard screen later
      if (big_button(reason.c_str(), cmd, target, theme.panel, theme.text, st)) {
        out.push_back({RecordCommand::Kind::skip, reason});
        st->choosing_skip_reason = false;
      }
    }
  }
  ImGui::Text("Go to plot (type or scan the stake):");
  ImGui::SetNextItemWidth(cmd);
  ImGui::PushStyleVar(ImGuiStyleVar_FrameBorderSize, 2.0f * scale);
  ImGui::PushStyleVar(ImGuiStyleVar_FramePadding, ImVec2(10 * scale, (target - ImGui::GetFontSize()) / 2));
  const bool jump_entered =
      ImGui::InputText("##jump", st->jump_label, sizeof st->jump_label, ImGuiInputTextFlags_EnterReturnsTrue);
  note_target("plot label", &st->targets);
  if (jump_entered) {
    out.push_back({RecordCommand::Kind::jump, st->jump_label});
    st->jump_label[0] = 0;
  }
  ImGui::PopStyleVar(2);
  ImGui::SameLine();
  if (big_button("Go", 2 * target, target, theme.button, theme.button_text, st) && st->jump_label[0]) {
    out.push_back({RecordCommand::Kind::jump, st->jump_label});
    st->jump_label[0] = 0;
  }
  ImGui::EndGroup();
  return out;
}

}  // namespace furrow
