#pragma once
// The Field map's content without any drawing: each plot at its field
// position with a fill colour, a pattern and a legend, coloured by the
// plot's status for a trait, by the trait's value, or by its residual in the
// interim analysis. Tested headlessly; the map screen only draws it.
//
// Colour scales that people with the common colour-vision deficiencies can
// read: values on a scale whose lightness rises steadily from dark blue to
// yellow (anchors of the viridis map, van der Walt & Smith 2015, released
// into the public domain), so order is read from lightness alone; residuals
// on a blue-white-orange scale (blue and orange stay apart for red-green
// deficiencies); status colours from the theme, each with its own pattern.

#include <optional>
#include <string>
#include <vector>

#include "app/work/before_leaving.h"
#include "app/work/theme.h"
#include "core/analysis.h"
#include "core/mixed_analysis.h"
#include "storage/trial_store.h"

namespace furrow {

enum class MapColouring { status, value, residual, trend };

enum class PlotState { not_yet, collected, missing, to_check, conflict };

// A pattern drawn over the fill so that status never rests on colour alone.
enum class MapPattern { none, outline_only, diagonal, exclamation, cross };

struct MapPlot {
  size_t plot_index = 0;          // into trial.layout.plots
  int site = 0, row = 1, column = 1;
  PlotState state = PlotState::not_yet;
  std::optional<double> value;    // the trait's live value (numeric traits)
  std::optional<double> residual; // internally studentized residual, when analysed
  std::optional<double> trend;    // fitted field trend (REML, AR1 x AR1), in the trait's unit
  Rgb fill, text;                 // text: black or white, whichever contrasts more
  MapPattern pattern = MapPattern::none;
};

struct LegendEntry {
  Rgb fill;
  MapPattern pattern = MapPattern::none;
  std::string label;
};

struct FieldMap {
  std::vector<MapPlot> plots;          // in walking order
  std::vector<std::string> site_names; // one per site (one empty name for a one-site trial)
  int rows = 0, columns = 0;           // grid per site
  std::vector<LegendEntry> legend;     // status: one entry per state; scales: samples low to high
  std::string scale_low, scale_high;   // the ends of a value or residual scale
  std::string note;                    // why a colouring shows nothing (e.g. no analysis yet)
};

// `leaving` marks values to check (flagged or outliers) for the trait;
// `analysis` (of the same trait and occasion) gives residuals; `reml` (the
// same, by REML with a field-trend test) gives the fitted field trend.
FieldMap build_field_map(const StoredTrial& trial, const std::vector<LiveObservation>& live, size_t trait_index,
                         int occasion, MapColouring colouring, const Theme& theme, const BeforeLeaving* leaving,
                         const Analysis* analysis, const MixedAnalysis* reml = nullptr);

// A point on the value scale, t in [0, 1] (dark blue to yellow).
Rgb value_colour(double t);
// A point on the residual scale, t in [-1, 1] (blue, white, orange).
Rgb residual_colour(double t);
// Black or white, whichever has the higher contrast on `fill`.
Rgb text_on(const Rgb& fill);

// Where each plot lies on the map, in map pixels from the top-left corner:
// sites side by side, field row 1 at the top and column 1 on the left.
struct MapGeometry {
  float cell = 0, gap = 0, site_gap = 0, header = 0;
  float width = 0, height = 0;
  struct Rect { float x0, y0, x1, y1; };
  Rect plot_rect(const MapPlot& p) const;
  float site_x(int site) const;
  int columns = 0, rows = 0;
};
MapGeometry map_geometry(const FieldMap& map, float cell_px, float header_px);

// The plot under a map point, or -1 (index into FieldMap::plots).
int plot_at(const FieldMap& map, const MapGeometry& g, float x, float y);

}  // namespace furrow
