#include "app/work/theme.h"

#include <cmath>

namespace furrow {
namespace {

constexpr Rgb hex(unsigned v) {
  return {static_cast<float>((v >> 16) & 0xFF) / 255.0f, static_cast<float>((v >> 8) & 0xFF) / 255.0f,
          static_cast<float>(v & 0xFF) / 255.0f};
}

// WCAG 2.1 linearisation of an sRGB channel.
double linear(double c) { return c <= 0.03928 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4); }

}  // namespace

Theme make_theme(ThemeKind kind) {
  Theme t;
  t.kind = kind;
  if (kind == ThemeKind::daylight) {
    t.background = hex(0xFFFFFF);
    t.panel = hex(0xF1F1EC);
    t.text = hex(0x000000);
    t.muted_text = hex(0x333333);
    t.button = hex(0x1B2A49);
    t.button_text = hex(0xFFFFFF);
    t.accent = hex(0x003F88);
    t.accent_text = hex(0xFFFFFF);
    t.refuse = hex(0x8B0000);
    t.refuse_text = hex(0xFFFFFF);
    t.confirm = hex(0xFFD54F);
    t.confirm_text = hex(0x000000);
    t.saved = hex(0x0B5D1E);
    t.saved_text = hex(0xFFFFFF);
  } else {
    t.background = hex(0x101214);
    t.panel = hex(0x1C2024);
    t.text = hex(0xF2F2F2);
    t.muted_text = hex(0xC8C8C8);
    // Light buttons on the dark page: a button must stand out as a shape
    // (3:1) as well as carry 7:1 text, which a dark button cannot do here.
    t.button = hex(0xC8D2E0);
    t.button_text = hex(0x000000);
    t.accent = hex(0x9CC3FF);
    t.accent_text = hex(0x000000);
    t.refuse = hex(0xFF8A80);
    t.refuse_text = hex(0x000000);
    t.confirm = hex(0xFFD54F);
    t.confirm_text = hex(0x000000);
    t.saved = hex(0x81C784);
    t.saved_text = hex(0x000000);
  }
  // Status colours: blue, amber, vermilion and purple differ in hue on the
  // blue/orange axis and in lightness, and stand at least 3:1 against the
  // theme's background (WCAG 2.1 SC 1.4.11, non-text contrast): darker on
  // daylight, lighter on dark (hues after Okabe & Ito's palette, from memory).
  if (kind == ThemeKind::daylight) {
    t.collected = hex(0x0072B2);
    t.missing = hex(0x7A5200);
    t.flagged = hex(0xD55E00);
    t.conflict = hex(0x3B0F4A);
  } else {
    t.collected = hex(0x56B4E9);
    t.missing = hex(0xE69F00);
    t.flagged = hex(0xF07030);
    t.conflict = hex(0xE0A0D0);
  }
  return t;
}

double relative_luminance(const Rgb& c) {
  return 0.2126 * linear(c.r) + 0.7152 * linear(c.g) + 0.0722 * linear(c.b);
}

double contrast_ratio(const Rgb& a, const Rgb& b) {
  const double la = relative_luminance(a), lb = relative_luminance(b);
  return (std::max(la, lb) + 0.05) / (std::min(la, lb) + 0.05);
}

std::vector<ColourPair> text_pairs(const Theme& t) {
  return {{"text on background", t.text, t.background},
          {"text on panel", t.text, t.panel},
          {"muted text on background", t.muted_text, t.background},
          {"muted text on panel", t.muted_text, t.panel},
          {"button text", t.button_text, t.button},
          {"accent text", t.accent_text, t.accent},
          {"refusal banner", t.refuse_text, t.refuse},
          {"confirmation banner", t.confirm_text, t.confirm},
          {"saved banner", t.saved_text, t.saved}};
}

}  // namespace furrow

namespace furrow {

std::vector<ColourPair> state_pairs(const Theme& t) {
  return {{"collected plot", t.collected, t.background},
          {"plot without a value", t.missing, t.background},
          {"value to check", t.flagged, t.background},
          {"conflict", t.conflict, t.background},
          {"conflict on a panel", t.conflict, t.panel},
          {"selected item", t.accent, t.background},
          {"button on the page", t.button, t.background},
          {"refusal banner", t.refuse, t.background},
          {"saved banner", t.saved, t.background}};
}

}  // namespace furrow
