#pragma once
// The Help screen: how the Record screen works, what the checks mean, and the
// field safety note.

#include "app/work/theme.h"

namespace furrow {

// The safety note shown in Help and in the README.
inline constexpr const char* kFieldSafetyNote =
    "Field safety: respect the re-entry interval on every plot treated with a crop-protection product "
    "(the product label decides); watch for heat stress, sharp tools and plot machinery. Local rules and "
    "the station's safety officer come first.";

void draw_help_screen(const Theme& theme, float scale, float top_px);

}  // namespace furrow
