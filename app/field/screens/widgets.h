#pragma once
// Pieces every screen draws with: theme colours for ImGui, a solid button that
// records where it was drawn (for tests and the touch-size check), and
// drag-to-scroll for lists (ImGui has none; a finger does not hover).

#include <imgui.h>

#include <initializer_list>
#include <utility>
#include <vector>

#include "app/field/screens/record_screen.h"
#include "app/work/theme.h"

namespace furrow {

inline ImVec4 to_imgui(const Rgb& c) { return ImVec4(c.r, c.g, c.b, 1.0f); }

struct ButtonLook {
  ButtonLook(const Rgb& bg, const Rgb& fg) : background(bg), text(fg) {}
  Rgb background, text;
  float border_px = 0;        // 0: no border
  Rgb border;
  bool align_left = false;
};

// One screen's window: the full width below the navigation bar (`top_px`),
// no decoration, in the theme's background and text colours plus `extra`
// colours, all pushed before the window begins so that they hold for all of
// it. The window ends and the colours are popped when this goes out of scope.
class ScreenWindow {
 public:
  ScreenWindow(const char* name, const Theme& theme, float top_px,
               std::initializer_list<std::pair<ImGuiCol, Rgb>> extra = {}, ImGuiWindowFlags flags = 0);
  ~ScreenWindow();
  ScreenWindow(const ScreenWindow&) = delete;
  ScreenWindow& operator=(const ScreenWindow&) = delete;

 private:
  int colours_ = 0;
};

// A button in one solid colour (no hover change: fingers do not hover).
// Its rectangle is appended to `targets` under `target_label` (the visible
// label when empty). Returns true when tapped.
bool solid_button(const char* label, ImVec2 size, const ButtonLook& look, std::vector<TapTarget>* targets,
                  const std::string& target_label = {});

// A full-width button whose text wraps onto as many lines as it needs (at
// least `min_height` tall); `id` must be unique in the window. Recorded in
// `targets` under `text`. Returns true when tapped.
bool wrapped_button(const char* id, const std::string& text, float width, float min_height, const ButtonLook& look,
                    std::vector<TapTarget>* targets);

// Appends the last item's rectangle to `targets`.
void note_target(const std::string& label, std::vector<TapTarget>* targets);

// Call inside a scrolling window: a finger dragged further than a tap moves
// the window's scroll position and is no longer a tap on the item below it.
void drag_to_scroll(float scale);

// Puts the next item on this line when `next_width` still fits, else on a
// new line (rows of buttons that wrap in a portrait window).
void flow_next(float next_width);

// The width of a solid button showing `label`: its text and padding, at
// least the touch-target size.
float button_width(const char* label, float scale);

// Wrapped text on a full-width coloured band (cautions, messages).
void banner(const char* text, const Rgb& background, const Rgb& foreground);

}  // namespace furrow
