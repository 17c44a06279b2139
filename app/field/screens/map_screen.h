#pragma once
// The Field map screen: the plots in their field positions, coloured by
// status, value or residual of the chosen trait, with a legend. Lists and
// the map pan by dragging; a tap on a plot opens it on the Record screen.
// While plots are drawn smaller than a fingertip, a tap zooms in around the
// tapped spot instead, so that every plot a finger opens is at least the
// touch-target size.

#include <optional>
#include <string>
#include <vector>

#include "app/work/field_map.h"
#include "app/field/screens/record_screen.h"
#include "app/work/theme.h"

namespace furrow {

struct MapScreenState {
  MapColouring colouring = MapColouring::status;
  float cell_px = 0;              // 0: the whole field fits the screen
  float scroll_x = -1, scroll_y = -1;   // a scroll position to apply in the next frame
  std::vector<TapTarget> targets; // rebuilt every frame
};

struct MapAction {
  enum class Kind { open_plot, next_trait, previous_trait, colouring_changed } kind = Kind::open_plot;
  size_t plot_index = 0;          // open_plot: into trial.layout.plots
};

// `plot_labels` parallel to trial.layout.plots; `trait_title` names the
// trait and occasion shown.
std::optional<MapAction> draw_map_screen(const FieldMap& map, const std::vector<std::string>& plot_labels,
                                         const std::string& trait_title, const Theme& theme, float scale,
                                         float top_px, MapScreenState* state);

}  // namespace furrow
