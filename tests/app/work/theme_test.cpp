// Colour contrast of the themes, by the WCAG 2.1 formula.

#include "app/work/theme.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

// WCAG 2.1 success criterion 1.4.6 (Contrast, Enhanced; level AAA): 7:1.
constexpr double kDaylightMinimumContrast = 7.0;
// WCAG 2.1 success criterion 1.4.3 (Contrast, Minimum; level AA): 4.5:1.
constexpr double kDarkMinimumContrast = 4.5;

TEST_CASE("the WCAG formula gives its known end points: black on white 21:1, equal colours 1:1") {
  CHECK(contrast_ratio({0, 0, 0}, {1, 1, 1}) == doctest::Approx(21.0).epsilon(1e-12));
  CHECK(contrast_ratio({0.5f, 0.5f, 0.5f}, {0.5f, 0.5f, 0.5f}) == doctest::Approx(1.0));
  // Mid grey #777777 on white is 4.48:1 (a figure commonly quoted with the WCAG formula; from memory).
  CHECK(contrast_ratio({0x77 / 255.0f, 0x77 / 255.0f, 0x77 / 255.0f}, {1, 1, 1}) == doctest::Approx(4.48).epsilon(0.005));
}

TEST_CASE("daylight theme: every text and its background at least 7:1 (WCAG 2.1 AAA)") {
  const Theme t = make_theme(ThemeKind::daylight);
  for (const ColourPair& p : text_pairs(t)) {
    INFO(p.name << ": " << contrast_ratio(p.text, p.background));
    CHECK(contrast_ratio(p.text, p.background) >= kDaylightMinimumContrast);
  }
}

TEST_CASE("dark theme: every text and its background at least 4.5:1 (WCAG 2.1 AA)") {
  const Theme t = make_theme(ThemeKind::dark);
  for (const ColourPair& p : text_pairs(t)) {
    INFO(p.name << ": " << contrast_ratio(p.text, p.background));
    CHECK(contrast_ratio(p.text, p.background) >= kDarkMinimumContrast);
  }
}

TEST_CASE("field-map status colours differ in lightness, not in hue alone") {
  const Theme t = make_theme(ThemeKind::daylight);
  const double l[] = {relative_luminance(t.collected), relative_luminance(t.missing), relative_luminance(t.flagged),
                      relative_luminance(t.conflict)};
  for (int i = 0; i < 4; ++i)
    for (int j = i + 1; j < 4; ++j) CHECK(std::abs(l[i] - l[j]) > 0.02);
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

// WCAG 2.1 SC 1.4.6 (enhanced contrast, 7:1 for text) and SC 1.4.11
// (non-text contrast, 3:1 for what shows a state or a control), in both themes.
TEST_CASE("both themes: text at least 7:1, every state colour at least 3:1 against what it sits on") {
  for (ThemeKind kind : {ThemeKind::daylight, ThemeKind::dark}) {
    const Theme t = make_theme(kind);
    for (const ColourPair& p : text_pairs(t)) {
      INFO(std::string(kind == ThemeKind::dark ? "dark: " : "daylight: ") << p.name << ": "
                                                                            << contrast_ratio(p.text, p.background));
      CHECK(contrast_ratio(p.text, p.background) >= 7.0);
    }
    for (const ColourPair& p : state_pairs(t)) {
      INFO(std::string(kind == ThemeKind::dark ? "dark: " : "daylight: ") << p.name << ": "
                                                                            << contrast_ratio(p.text, p.background));
      CHECK(contrast_ratio(p.text, p.background) >= 3.0);
    }
  }
}

}  // namespace
}  // namespace furrow
