#include "app/field/screens/record_screen.h"

#include <imgui.h>

#include <algorithm>
#include <set>

#include "app/field/screens/widgets.h"
#include "app/work/glossary.h"

namespace furrow {
namespace {

// Keypad keys are larger than the minimum: gloves and one free hand.
constexpr float kKeyPx = 72.0f;
// Lines of banner text shown without scrolling inside the banner.
constexpr int kBannerLines = 4;

bool big_button(const char* label, float width, float height, const Rgb& bg, const Rgb& fg, RecordScreenState* st) {
  return solid_button(label, ImVec2(width, height), ButtonLook{bg, fg}, &st->targets);
}

bool is_value_key(unsigned c) { return (c >= '0' && c <= '9') || c == '.' || c == '-'; }

// Keyboard and scanner keys of this frame (see the header).
void read_keys(const RecordView& v, RecordScreenState* st, std::vector<RecordCommand>* out) {
  if (ImGui::GetIO().WantTextInput) return;   // a text field has the keyboard
  const ImGuiIO& io = ImGui::GetIO();
  const double now = ImGui::GetTime();
  for (int i = 0; i < io.InputQueueCharacters.Size; ++i) {
    unsigned c = io.InputQueueCharacters[i];
    if (c == ',') c = '.';
    if (c < 0x20 || c > 0x7E) continue;
    st->held_keys += static_cast<char>(c);
    st->last_key_time = now;
  }
  const bool enter = ImGui::IsKeyPressed(ImGui::GetKeyIndex(ImGuiKey_Enter), false) ||
                     ImGui::IsKeyPressed(ImGui::GetKeyIndex(ImGuiKey_KeyPadEnter), false);
  const bool backspace = ImGui::IsKeyPressed(ImGui::GetKeyIndex(ImGuiKey_Backspace), true);
  const auto flush = [&]() {
    std::string keys;
    for (char c : st->held_keys)
      if (is_value_key(static_cast<unsigned char>(c))) keys += c;
    if (!keys.empty()) out->push_back({RecordCommand::Kind::type, keys});
    st->held_keys.clear();
  };
  if (enter) {
    if (st->held_keys.size() >= 2) {
      // A burst ending in Enter: a scanned stake label.
      out->push_back({RecordCommand::Kind::jump, st->held_keys});
      st->held_keys.clear();
    } else {
      flush();
      if (!v.typed.empty() || !st->held_keys.empty() || out->size() > 0) out->push_back({RecordCommand::Kind::save, {}});
    }
    return;
  }
  if (!st->held_keys.empty() && now - st->last_key_time > kScanKeyGapSeconds) flush();
  if (backspace) {
    flush();
    out->push_back({RecordCommand::Kind::erase, {}});
  }
}

}  // namespace

void show_outcome(const EntryOutcome& outcome, RecordScreenState* state) {
  state->banner = outcome.message;
  switch (outcome.kind) {
    case EntryOutcome::Kind::saved: state->tone = RecordScreenState::Tone::saved; break;
    case EntryOutcome::Kind::needs_confirmation: state->tone = RecordScreenState::Tone::confirm; break;
    case EntryOutcome::Kind::refused: state->tone = RecordScreenState::Tone::refuse; break;
  }
}

void apply_record_command(const RecordCommand& c, RecordSession& s, RecordScreenState* ui) {
  auto show_status = [&](const Status& st, const std::string& done) {
    ui->banner = st ? done : st.problem().message;
    ui->tone = st ? RecordScreenState::Tone::saved : RecordScreenState::Tone::refuse;
  };
  // A command that leaves the cell clears the banner of the cell left behind,
  // and says what was dropped (rule E1).
  auto moved = [&]() {
    const std::string notice = s.view().notice;
    ui->banner = notice;
    ui->tone = notice.empty() ? RecordScreenState::Tone::none : RecordScreenState::Tone::refuse;
  };
  switch (c.kind) {
    // Typing starts anew: a question or a refusal about earlier text, or a
    // notice about another plot, no longer applies.
    case RecordCommand::Kind::type:
      s.type(c.text);
      if (ui->tone != RecordScreenState::Tone::saved) ui->tone = RecordScreenState::Tone::none;
      break;
    case RecordCommand::Kind::erase:
      s.erase();
      if (ui->tone != RecordScreenState::Tone::saved) ui->tone = RecordScreenState::Tone::none;
      break;
    case RecordCommand::Kind::save: show_outcome(s.save(), ui); break;
    case RecordCommand::Kind::confirm: show_outcome(s.confirm(), ui); break;
    case RecordCommand::Kind::save_suggestion: show_outcome(s.save_suggestion(), ui); break;
    case RecordCommand::Kind::value_is_right:
      show_status(s.confirm_saved(c.text), "marked as checked: the value is right");
      break;
    case RecordCommand::Kind::skip: {
      const RecordView before = s.view();
      const Status st = s.skip(c.text, c.note);
      std::string done = "skipped plot " + before.plot_label + ": " + c.text;
      if (before.current && before.current->rfind("missing", 0) != 0)
        done += " (it held " + *before.current + "; Undo last entry brings it back)";
      const std::string notice = s.view().notice;
      show_status(st, notice.empty() ? done : notice + "\n" + done);
      break;
    }
    case RecordCommand::Kind::next: s.next(); moved(); break;
    case RecordCommand::Kind::previous: s.previous(); moved(); break;
    case RecordCommand::Kind::jump: {
      const Status st = s.jump_to(c.text);
      if (st) moved();
      else show_status(st, "");
      if (st && ui->banner.empty()) show_status(st, "plot " + s.view().plot_label);
      break;
    }
    case RecordCommand::Kind::undo: {
      const Status st = s.undo();
      const std::string notice = s.view().notice;
      const std::string done = "undid the last entry on plot " + s.view().plot_label + ", " + s.view().trait_name +
                               " (a new log row)";
      show_status(st, notice.empty() ? done : notice + "\n" + done);
      break;
    }
    case RecordCommand::Kind::set_walk: {
      const Status st = s.set_walk(c.walk);
      const std::string notice = s.view().notice;
      const std::string done = std::string(term::kTodaysWalk) + ": " + s.walk().describe(s.trial());
      show_status(st, notice.empty() ? done : notice + "\n" + done);
      break;
    }
    case RecordCommand::Kind::note: show_status(s.add_note(c.text), "note kept for plot " + s.view().plot_label); break;
  }
}

std::vector<RecordCommand> draw_record_screen(const RecordView& v, const StoredTrial& trial, const Walk& walk,
                                              const std::string& saved_question, const Theme& theme, float scale,
                                              RecordScreenState* st, float top_px) {
  std::vector<RecordCommand> out;
  st->targets.clear();
  // Keys reach the value only while the value is on screen (not under the
  // walk chooser).
  if (!st->choosing_walk) read_keys(v, st, &out);
  else st->held_keys.clear();
  const ImGuiViewport* vp = ImGui::GetMainViewport();
  const ScreenWindow window("Record", theme, top_px,
                            {{ImGuiCol_FrameBg, theme.panel},
                             {ImGuiCol_FrameBgActive, theme.panel},
                             {ImGuiCol_FrameBgHovered, theme.panel},
                             {ImGuiCol_Border, theme.text}});
  drag_to_scroll(scale);
  const ImGuiStyle& style = ImGui::GetStyle();
  const float target = touch_px(scale);
  const float width = ImGui::GetContentRegionAvail().x;
  const bool portrait = vp->WorkSize.y > vp->WorkSize.x;

  // Where we are: a fixed number of lines, so that nothing below moves.
  ImGuiIO& io = ImGui::GetIO();
  ImFont* large = io.Fonts->Fonts.Size > 2 ? io.Fonts->Fonts[1] : ImGui::GetFont();
  ImFont* huge = io.Fonts->Fonts.Size > 2 ? io.Fonts->Fonts[2] : ImGui::GetFont();
  // Line 1: the plot (large) and where it lies; line 2: the trait and its
  // usual range; line 3: what is recorded. Each stays one line (clipped at
  // the window's edge rather than wrapped, which would move what is below).
  // In a narrow window (for its text size) the details take lines of their
  // own: decided by the window, never by the plot, so nothing moves between plots.
  const bool narrow = width < 45 * ImGui::GetFontSize();
  ImGui::PushFont(huge);
  ImGui::Text("Plot %s", v.plot_label.c_str());
  ImGui::PopFont();
  if (!narrow) {
    ImGui::SameLine(0, target / 2);
    ImGui::SetCursorPosY(ImGui::GetCursorPosY() + huge->FontSize * ImGui::GetIO().FontGlobalScale -
                         ImGui::GetTextLineHeight() - style.FramePadding.y);
  }
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(theme.muted_text));
  ImGui::Text("%s%sblock %d   row %d   column %d   %s", v.site.c_str(), v.site.empty() ? "" : "   ", v.block, v.row,
              v.column, v.treatment.c_str());
  ImGui::PopStyleColor();
  ImGui::PushFont(large);
  std::string trait = v.trait_name + (v.unit.empty() ? "" : " (" + v.unit + ")");
  if (v.occasions > 1) trait += ", occasion " + std::to_string(v.occasion);
  ImGui::TextUnformatted(trait.c_str());
  ImGui::PopFont();
  if (!narrow) {
    if (!v.limits.empty()) {
      ImGui::SameLine(0, target / 2);
      ImGui::TextUnformatted(v.limits.c_str());
    }
  } else {
    ImGui::TextUnformatted(v.limits.empty() ? " " : v.limits.c_str());
  }
  std::string recorded = "Recorded: " + (v.current ? *v.current : std::string("nothing yet"));
  if (!v.note.empty()) recorded += "   (note: " + v.note + ")";
  if (!v.pending_note.empty()) recorded += "   (note waiting for the value: " + v.pending_note + ")";
  ImGui::TextUnformatted(recorded.c_str());
  // Today's walk: the chooser's button and the walk's progress, two lines
  // of fixed height whatever they say.
  std::string progress;
  if (v.in_walk) {
    progress = "Done " + std::to_string(v.trait_done) + " of " + std::to_string(v.trait_total) + "   plot " +
               std::to_string(v.walk_position) + " of " + std::to_string(v.walk_plots);
    if (v.walk_total != v.trait_total)
      progress += "   walk " + std::to_string(v.walk_done) + " of " + std::to_string(v.walk_total);
    if (v.walk_complete) progress += "   (walk complete)";
  } else {
    progress = "This plot and trait are not part of today's walk.";
  }
  const std::string walk_label = std::string(term::kTodaysWalk) + ": " + v.walk_summary;
  const auto draw_walk_status = [&](float w) {
    ButtonLook look{st->choosing_walk ? theme.accent : theme.panel, st->choosing_walk ? theme.accent_text : theme.text};
    look.border_px = 2.0f * scale;
    look.border = theme.text;
    look.align_left = true;
    if (solid_button((walk_label + "##walk").c_str(), ImVec2(w, target), look, &st->targets, "Today's walk"))
      st->choosing_walk = !st->choosing_walk;
    ImGui::BeginChild("progress", ImVec2(w, (narrow ? 3 : 2) * ImGui::GetTextLineHeightWithSpacing()), false,
                      ImGuiWindowFlags_NoScrollbar | ImGuiWindowFlags_NoScrollWithMouse);
    ImGui::PushTextWrapPos(0.0f);
    ImGui::TextUnformatted(progress.c_str());
    ImGui::PopTextWrapPos();
    ImGui::EndChild();
  };

  if (st->choosing_walk) {
    draw_walk_status(width);
    // The walk chooser: a tap on a trait, block or mode changes the walk at once.
    WalkChoice c = walk.choice(trial);
    const auto toggle = [&](const char* label, bool on, float w) {
      ButtonLook look{on ? theme.accent : theme.background, on ? theme.accent_text : theme.text};
      look.border_px = 2.0f * scale;
      look.border = theme.text;
      return solid_button(label, ImVec2(w, target), look, &st->targets);
    };
    ImGui::TextUnformatted("Traits recorded today (tap to add or remove):");
    bool first = true;
    for (size_t k = 0; k < trial.plan.traits.size(); ++k) {
      const std::string label = trial.plan.traits[k].name;
      const float w = button_width(label.c_str(), scale);
      if (!first) flow_next(w);
      first = false;
      if (toggle(label.c_str(), walk.has_trait(k), w)) {
        const std::string code = trial.plan.traits[k].code;
        auto it = std::find(c.trait_codes.begin(), c.trait_codes.end(), code);
        if (it != c.trait_codes.end()) {
          if (c.trait_codes.size() > 1) c.trait_codes.erase(it);
        } else {
          c.trait_codes.push_back(code);
        }
        out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
      }
    }
    std::set<int> blocks;
    for (const PlannedPlot& p : trial.layout.plots) blocks.insert(p.block);
    ImGui::TextUnformatted("Blocks:");
    const float all_w = button_width("Every block", scale);
    if (toggle("Every block", walk.blocks().empty(), all_w)) {
      c.blocks.clear();
      out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
    }
    for (int b : blocks) {
      const std::string label = "Block " + std::to_string(b);
      const float w = button_width(label.c_str(), scale);
      flow_next(w);
      const auto& chosen = walk.blocks();
      const bool on = std::find(chosen.begin(), chosen.end(), b) != chosen.end();
      if (toggle(label.c_str(), on, w)) {
        if (on) std::erase(c.blocks, b);
        else c.blocks.push_back(b);
        out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
      }
    }
    int most_occasions = 1;
    for (size_t k : walk.traits()) most_occasions = std::max(most_occasions, trial.plan.traits[k].occasions);
    if (most_occasions > 1) {
      ImGui::Text("Occasion %d of %d", walk.occasion(), most_occasions);
      ImGui::SameLine();
      if (big_button("Earlier occasion", button_width("Earlier occasion", scale), target, theme.button,
                     theme.button_text, st) && walk.occasion() > 1) {
        c.occasion = walk.occasion() - 1;
        out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
      }
      flow_next(button_width("Later occasion", scale));
      if (big_button("Later occasion", button_width("Later occasion", scale), target, theme.button, theme.button_text,
                     st) && walk.occasion() < most_occasions) {
        c.occasion = walk.occasion() + 1;
        out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
      }
    }
    const float mode_w = button_width("Every trait on each plot", scale);
    if (toggle("One trait at a time", !walk.every_trait_per_plot(), mode_w)) {
      c.every_trait_per_plot = false;
      out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
    }
    flow_next(mode_w);
    if (toggle("Every trait on each plot", walk.every_trait_per_plot(), mode_w)) {
      c.every_trait_per_plot = true;
      out.push_back({RecordCommand::Kind::set_walk, {}, {}, c});
    }
    if (big_button("Done", std::min(width, 6 * target), target * 1.3f, theme.accent, theme.accent_text, st))
      st->choosing_walk = false;
    return out;
  }

  // The banner: a reserved area of fixed height (rule: nothing moves).
  // Fewer reserved lines where the text is large for the window.
  const int banner_lines = narrow ? kBannerLines - 1 : portrait ? kBannerLines : kBannerLines + 2;
  const float banner_text_h = banner_lines * ImGui::GetTextLineHeightWithSpacing();
  const float banner_buttons_h = 1.3f * target;
  const auto draw_banner = [&](float w) {
    const bool tone = st->tone != RecordScreenState::Tone::none && !st->banner.empty();
    const bool question = !tone && !saved_question.empty() && v.typed.empty();
    const Rgb bg = question                                       ? theme.confirm
                   : !tone                                        ? theme.background
                   : st->tone == RecordScreenState::Tone::saved   ? theme.saved
                   : st->tone == RecordScreenState::Tone::confirm ? theme.confirm
                                                                  : theme.refuse;
    const Rgb fg = question                                       ? theme.confirm_text
                   : !tone                                        ? theme.text
                   : st->tone == RecordScreenState::Tone::saved   ? theme.saved_text
                   : st->tone == RecordScreenState::Tone::confirm ? theme.confirm_text
                                                                  : theme.refuse_text;
    const float h = banner_text_h + banner_buttons_h + 2 * style.WindowPadding.y + style.ItemSpacing.y;
    ImGui::PushStyleColor(ImGuiCol_ChildBg, to_imgui(bg));
    ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(fg));
    // An edge in the text colour: a pale banner on a pale page still shows.
    ImGui::PushStyleColor(ImGuiCol_Border, to_imgui(tone || question ? theme.text : theme.background));
    ImGui::PushStyleVar(ImGuiStyleVar_ChildBorderSize, 2.0f * scale);
    ImGui::BeginChild("banner", ImVec2(w, h), true, ImGuiWindowFlags_NoScrollbar | ImGuiWindowFlags_AlwaysUseWindowPadding);
    ImGui::BeginChild("banner text", ImVec2(0, banner_text_h), false, ImGuiWindowFlags_NoScrollbar);
    drag_to_scroll(scale);
    const std::string& words = tone ? st->banner : saved_question;
    if (!words.empty()) {
      ImGui::PushTextWrapPos(0.0f);
      ImGui::TextUnformatted(words.c_str());
      ImGui::PopTextWrapPos();
    }
    const bool more = ImGui::GetScrollMaxY() > ImGui::GetScrollY() + 1;
    ImGui::EndChild();
    if (more) {
      // Say that the banner holds more than it shows (drag it to read on).
      const ImVec2 at = ImGui::GetItemRectMax();
      const char* cue = "more: drag the message up";
      const ImVec2 size = ImGui::CalcTextSize(cue);
      ImGui::GetWindowDrawList()->AddText(ImVec2(at.x - size.x, at.y - size.y), ImGui::GetColorU32(ImGuiCol_Text), cue);
    }
    // The answers to the banner's question, only while it is asked about the
    // text on screen (rule E2).
    const bool asking = st->tone == RecordScreenState::Tone::confirm && v.has_pending;
    const float inner = w - 2 * style.WindowPadding.x;
    if (st->tone == RecordScreenState::Tone::refuse && !v.has_pending && !v.suggestion.empty()) {
      // Refused for its range, but a likely slip: only the value probably meant.
      const std::string label = "Save " + v.suggestion + " instead";
      if (solid_button(label.c_str(), ImVec2(inner, banner_buttons_h), ButtonLook{theme.accent, theme.accent_text},
                       &st->targets, "Save suggestion"))
        out.push_back({RecordCommand::Kind::save_suggestion, {}});
    } else if (asking) {
      const float bw = v.suggestion.empty() ? inner : (inner - style.ItemSpacing.x) / 2;
      if (big_button("Confirm value", bw, banner_buttons_h, theme.button, theme.button_text, st))
        out.push_back({RecordCommand::Kind::confirm, {}});
      if (!v.suggestion.empty()) {
        ImGui::SameLine();
        const std::string label = "Save " + v.suggestion + " instead";
        if (solid_button(label.c_str(), ImVec2(bw, banner_buttons_h), ButtonLook{theme.accent, theme.accent_text},
                         &st->targets, "Save suggestion"))
          out.push_back({RecordCommand::Kind::save_suggestion, {}});
      }
    } else if (!saved_question.empty() && v.typed.empty()) {
      // A saved value Before leaving asks about: the crew can say it is right.
      if (big_button(term::kValueIsRight, inner, banner_buttons_h, theme.button, theme.button_text, st))
        out.push_back({RecordCommand::Kind::value_is_right, kOutlierCheck});
    }
    ImGui::EndChild();
    ImGui::PopStyleVar();
    ImGui::PopStyleColor(3);
  };

  // Landscape: the keypad on the left, the walk, banner and commands on the
  // right. Portrait: the walk and banner above the keypad (which uses the
  // whole width), the commands below it.
  float cmd = 4.5f * target;
  const float key_w = portrait ? std::max(target, (width - 2 * style.ItemSpacing.x) / 3) : kKeyPx * std::max(1.0f, scale);
  const float pad_width = 3 * key_w + 2 * style.ItemSpacing.x;
  if (portrait) {
    draw_walk_status(width);
    draw_banner(width);
    cmd = std::max(target, (width - style.ItemSpacing.x) / 2);
  } else {
    // The commands use the width beside the keypad (up to a reach a thumb covers).
    cmd = std::max(target, std::min(8.0f * target, (width - pad_width - 2 * style.ItemSpacing.x - target) / 2));
  }
  // Keys as tall as the space left allows, so that Save stays on screen while
  // there is room; with large text on a small screen the page scrolls instead
  // (drag it), never making a key smaller than the touch size or its label.
  const float value_h = huge->FontSize * ImGui::GetIO().FontGlobalScale + style.ItemSpacing.y;
  const float room = ImGui::GetContentRegionAvail().y - value_h - 5 * style.ItemSpacing.y -
                     (portrait ? 3 * (1.3f * target + style.ItemSpacing.y) : 0);
  // Never shorter than the touch size or than its label needs.
  const float key_floor = std::max(kTouchTargetPx, ImGui::GetFontSize() + 2 * style.FramePadding.y + 8.0f);
  const float key_h = std::clamp(room / 5, key_floor, std::max(key_floor, kKeyPx * std::max(1.0f, scale)));
  ImGui::BeginGroup();
  {
    // The value line is exactly as wide as the keypad, whatever is typed, so
    // that nothing beside it moves; a long value gets a smaller font, then
    // shows its end.
    ImGui::BeginChild("value", ImVec2(pad_width, value_h), false,
                      ImGuiWindowFlags_NoScrollbar | ImGuiWindowFlags_NoScrollWithMouse);
    std::string line = "Value: " + v.typed + "_";
    ImFont* font = huge;
    if (ImGui::CalcTextSize(line.c_str()).x * huge->FontSize / ImGui::GetFontSize() > pad_width) font = large;
    ImGui::PushFont(font);
    while (ImGui::CalcTextSize(line.c_str()).x > pad_width && line.size() > 10)
      line = "Value: ..." + line.substr(std::min(line.size(), size_t{11}));
    ImGui::TextUnformatted(line.c_str());
    ImGui::PopFont();
    ImGui::EndChild();
  }
  static const char* kKeys[4][3] = {{"7", "8", "9"}, {"4", "5", "6"}, {"1", "2", "3"}, {".", "0", "Del"}};
  for (auto& row : kKeys) {
    for (int c = 0; c < 3; ++c) {
      if (c) ImGui::SameLine();
      if (big_button(row[c], key_w, key_h, theme.button, theme.button_text, st)) {
        if (std::string(row[c]) == "Del") out.push_back({RecordCommand::Kind::erase, {}});
        else out.push_back({RecordCommand::Kind::type, row[c]});
      }
    }
  }
  if (big_button("Save", pad_width, key_h, theme.accent, theme.accent_text, st))
    out.push_back({RecordCommand::Kind::save, {}});
  ImGui::EndGroup();

  // Moving along and the other commands.
  if (!portrait) ImGui::SameLine(0, target);
  ImGui::BeginGroup();
  if (!portrait) {
    draw_walk_status(2 * cmd + style.ItemSpacing.x);
    draw_banner(2 * cmd + style.ItemSpacing.x);
  }
  if (big_button("Previous plot", cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::previous, {}});
  ImGui::SameLine();
  if (big_button("Next plot", cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::next, {}});
  // Undo, Skip and Note: three in a row where they fit at the touch size.
  const float row_w = 2 * cmd + style.ItemSpacing.x;
  const bool three = (row_w - 2 * style.ItemSpacing.x) / 3 >= button_width("Undo last entry", scale);
  const float small_cmd = three ? (row_w - 2 * style.ItemSpacing.x) / 3 : cmd;
  if (big_button("Undo last entry", small_cmd, target * 1.3f, theme.button, theme.button_text, st))
    out.push_back({RecordCommand::Kind::undo, {}});
  ImGui::SameLine();
  if (big_button("Skip plot...", small_cmd, target * 1.3f, theme.button, theme.button_text, st)) {
    st->choosing_skip_reason = !st->choosing_skip_reason;
    st->writing_note = false;
  }
  if (three) ImGui::SameLine();
  if (big_button("Note...", small_cmd, target * 1.3f, theme.button, theme.button_text, st)) {
    st->writing_note = !st->writing_note;
    st->note_for_skip = false;
    st->choosing_skip_reason = false;
  }
  const auto text_field = [&](const char* id, char* buf, size_t size, float w) {
    ImGui::SetNextItemWidth(w);
    ImGui::PushStyleVar(ImGuiStyleVar_FrameBorderSize, 2.0f * scale);
    ImGui::PushStyleVar(ImGuiStyleVar_FramePadding, ImVec2(10 * scale, std::max(4.0f, (target - ImGui::GetFontSize()) / 2)));
    const bool entered = ImGui::InputText(id, buf, size, ImGuiInputTextFlags_EnterReturnsTrue);
    ImGui::PopStyleVar(2);
    return entered;
  };
  // The Go to field keeps its place: panels open below it.
  ImGui::TextUnformatted("Go to plot (type or scan the stake):");
  const float go_w = button_width("Go", scale);
  const bool jump_entered =
      text_field("##jump", st->jump_label, sizeof st->jump_label, std::max(target, 2 * cmd - go_w));
  note_target("plot label", &st->targets);
  ImGui::SameLine();
  if ((big_button("Go", go_w, target, theme.button, theme.button_text, st) || jump_entered) && st->jump_label[0]) {
    out.push_back({RecordCommand::Kind::jump, st->jump_label});
    st->jump_label[0] = 0;
  }
  if (st->choosing_skip_reason) {
    for (const std::string& reason : kSkipReasons) {
      ButtonLook look{theme.panel, theme.text};
      look.border_px = 2.0f * scale;
      look.border = theme.text;
      if (solid_button(reason.c_str(), ImVec2(2 * cmd + style.ItemSpacing.x, target), look, &st->targets)) {
        st->choosing_skip_reason = false;
        if (reason == "other") {
          // "other" needs a note saying why: ask for it, then skip.
          st->writing_note = true;
          st->note_for_skip = true;
        } else {
          out.push_back({RecordCommand::Kind::skip, reason});
        }
      }
    }
  }
  if (st->writing_note) {
    ImGui::TextUnformatted(st->note_for_skip ? "Why is there no value? (skip reason: other)" : "Note for this plot:");
    const bool entered = text_field("##note", st->note_text, sizeof st->note_text, 2 * cmd + style.ItemSpacing.x);
    note_target("note text", &st->targets);
    const char* done = st->note_for_skip ? "Skip with this note" : "Keep note";
    if ((big_button(done, button_width(done, scale), target, theme.accent, theme.accent_text, st) || entered) &&
        st->note_text[0]) {
      if (st->note_for_skip) out.push_back({RecordCommand::Kind::skip, "other", st->note_text});
      else out.push_back({RecordCommand::Kind::note, st->note_text});
      st->note_text[0] = 0;
      st->writing_note = false;
      st->note_for_skip = false;
    }
  }
  ImGui::EndGroup();
  ImGui::Dummy(ImVec2(0, style.WindowPadding.y));
  return out;
}

}  // namespace furrow
