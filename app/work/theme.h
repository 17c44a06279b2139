#pragma once
// Colours of the two themes, as plain RGB so that they can be checked
// without a window: a high-contrast daylight theme for bright sun and a dark
// theme for dawn and dusk. Screens take every colour from here.

#include <string>
#include <vector>

namespace furrow {

struct Rgb {
  float r = 0, g = 0, b = 0;   // 0..1, sRGB
};

enum class ThemeKind { daylight, dark };

struct Theme {
  ThemeKind kind = ThemeKind::daylight;
  Rgb background, panel, text, muted_text, button, button_text, accent, accent_text;
  Rgb refuse, refuse_text, confirm, confirm_text, saved, saved_text;
  // Field-map status colours (collected, missing, flagged, conflict) chosen
  // to stay apart for the common colour-vision deficiencies (blue/orange
  // axis plus lightness), each drawn with its own pattern as well.
  Rgb collected, missing, flagged, conflict;
};

Theme make_theme(ThemeKind kind);

// WCAG 2.1 relative luminance and contrast ratio (success criteria 1.4.3 /
// 1.4.6): L = 0.2126 R + 0.7152 G + 0.0722 B on linearised channels;
// ratio = (L1 + 0.05) / (L2 + 0.05) with L1 the lighter.
double relative_luminance(const Rgb& c);
double contrast_ratio(const Rgb& a, const Rgb& b);

// Every text colour paired with the background it is drawn on, named.
struct ColourPair {
  std::string name;
  Rgb text, background;
};
std::vector<ColourPair> text_pairs(const Theme& t);
// Every colour that carries a state (map status, selected item, banner) with
// the background it must stand out from, named (WCAG 2.1 SC 1.4.11: 3:1).
std::vector<ColourPair> state_pairs(const Theme& t);

}  // namespace furrow
