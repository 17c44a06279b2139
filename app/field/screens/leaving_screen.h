#pragma once
// The Before leaving screen: one list of everything to fix while the crew is
// still in the field. Each row is a large button that opens that plot and
// trait on the Record screen; the list scrolls by dragging.

#include <optional>
#include <string>
#include <vector>

#include "app/work/before_leaving.h"
#include "app/field/screens/record_screen.h"
#include "app/work/theme.h"

namespace furrow {

struct LeavingScreenState {
  std::vector<TapTarget> targets;   // rebuilt every frame
};

struct OpenItem {
  size_t plot_index = 0, trait_index = 0;
  int occasion = 1;
};

// `walk`: the description of today's walk.
std::optional<OpenItem> draw_leaving_screen(const BeforeLeaving& list, const std::string& walk, const Theme& theme, float scale, float top_px,
                                            LeavingScreenState* state);

}  // namespace furrow
