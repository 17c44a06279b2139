#include "app/work/field_map.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <set>

namespace furrow {
namespace {

Rgb hex(unsigned v) { return {((v >> 16) & 0xFF) / 255.0f, ((v >> 8) & 0xFF) / 255.0f, (v & 0xFF) / 255.0f}; }

Rgb mix(const Rgb& a, const Rgb& b, double t) {
  const float u = static_cast<float>(t);
  return {a.r + (b.r - a.r) * u, a.g + (b.g - a.g) * u, a.b + (b.b - a.b) * u};
}

// Evenly spaced anchors, interpolated linearly.
Rgb along(const unsigned* anchors, int n, double t) {
  t = std::clamp(t, 0.0, 1.0) * (n - 1);
  const int i = std::min(static_cast<int>(t), n - 2);
  return mix(hex(anchors[i]), hex(anchors[i + 1]), t - i);
}

// Nine anchors of viridis at t = 0, 1/8, ..., 1 (values recalled from
// memory; a test checks that lightness rises along the whole scale).
constexpr unsigned kValueAnchors[] = {0x440154, 0x472D7B, 0x3B528B, 0x2C728E, 0x21918C,
                                      0x28AE80, 0x5EC962, 0xADDC30, 0xFDE725};
constexpr unsigned kResidualAnchors[] = {0x2166AC, 0xF7F7F7, 0xB35806};
// Studentized residuals beyond this take the end colour.
constexpr double kResidualScaleEnd = 3.0;

std::string number_text(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4g", v);
  return buf;
}

}  // namespace

Rgb value_colour(double t) { return along(kValueAnchors, 9, t); }
Rgb residual_colour(double t) { return along(kResidualAnchors, 3, (t + 1.0) / 2.0); }

Rgb text_on(const Rgb& fill) {
  const Rgb black{0, 0, 0}, white{1, 1, 1};
  return contrast_ratio(black, fill) >= contrast_ratio(white, fill) ? black : white;
}

FieldMap build_field_map(const StoredTrial& t, const std::vector<LiveObservation>& live, size_t trait_index,
                         int occasion, MapColouring colouring, const Theme& theme, const BeforeLeaving* leaving,
                         const Analysis* analysis, const MixedAnalysis* reml) {
  FieldMap m;
  m.rows = t.plan.rows;
  m.columns = t.plan.columns;
  m.site_names = t.plan.sites.empty() ? std::vector<std::string>{""} : t.plan.sites;
  const std::int64_t trait_id = t.trait_ids[trait_index];
  std::map<std::int64_t, size_t> index_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) index_of[t.plot_ids[i]] = i;
  // Live records of this trait and occasion per plot.
  std::vector<std::set<std::string>> values(t.layout.plots.size());
  std::vector<std::optional<double>> numbers(t.layout.plots.size());
  std::vector<char> reasoned(t.layout.plots.size(), 0);
  for (const auto& x : live) {
    if (x.trait_id != trait_id || x.occasion != occasion) continue;
    const auto it = index_of.find(x.plot_id);
    if (it == index_of.end()) continue;
    if (x.value) {
      values[it->second].insert(value_identity(x));   // agreeing values are one
      numbers[it->second] = x.number;
    } else if (x.missing_reason && *x.missing_reason != kWithdrawnReason) {
      values[it->second].insert("missing: " + *x.missing_reason);
      reasoned[it->second] = 1;
    }
  }
  std::vector<char> to_check(t.layout.plots.size(), 0);
  if (leaving)
    for (const LeavingItem& item : leaving->items)
      if (item.trait_index == trait_index && item.occasion == occasion &&
          (item.has(LeavingItem::Kind::flagged) || item.has(LeavingItem::Kind::outlier)))
        to_check[item.plot_index] = 1;
  std::vector<std::optional<double>> residuals(t.layout.plots.size());
  if (analysis)
    for (const PlotFit& f : analysis->fits)
      if (f.record >= 0 && static_cast<size_t>(f.record) < residuals.size()) residuals[f.record] = f.studentized;

  // The fitted field trend, centred on zero: its largest size sets the scale.
  const FieldTrendFit* trend = reml && reml->trend ? &*reml->trend : nullptr;
  double trend_end = 0;
  if (trend)
    for (double v : trend->record_trend) trend_end = std::max(trend_end, std::abs(v));

  double lo = 0, hi = 0;
  bool any_value = false;
  for (const auto& n : numbers)
    if (n) {
      lo = any_value ? std::min(lo, *n) : *n;
      hi = any_value ? std::max(hi, *n) : *n;
      any_value = true;
    }

  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    const PlannedPlot& p = t.layout.plots[i];
    MapPlot mp;
    mp.plot_index = i;
    mp.site = p.site;
    mp.row = p.row;
    mp.column = p.column;
    if (values[i].size() > 1) mp.state = PlotState::conflict;
    else if (to_check[i]) mp.state = PlotState::to_check;
    else if (values[i].size() == 1) mp.state = reasoned[i] && !numbers[i] ? PlotState::missing : PlotState::collected;
    if (values[i].size() == 1) mp.value = numbers[i];
    mp.residual = residuals[i];
    if (trend && i < trend->record_trend.size()) mp.trend = trend->record_trend[i];
    // Status decides the pattern in every colouring, so that a conflict or a
    // value to check stays visible on a value map too.
    switch (mp.state) {
      case PlotState::not_yet: mp.fill = theme.background; mp.pattern = MapPattern::outline_only; break;
      case PlotState::collected: mp.fill = theme.collected; mp.pattern = MapPattern::none; break;
      case PlotState::missing: mp.fill = theme.missing; mp.pattern = MapPattern::diagonal; break;
      case PlotState::to_check: mp.fill = theme.flagged; mp.pattern = MapPattern::exclamation; break;
      case PlotState::conflict: mp.fill = theme.conflict; mp.pattern = MapPattern::cross; break;
    }
    if (colouring == MapColouring::value && mp.value && mp.state != PlotState::conflict)
      mp.fill = value_colour(hi > lo ? (*mp.value - lo) / (hi - lo) : 0.5);
    if (colouring == MapColouring::residual && mp.residual && mp.state != PlotState::conflict)
      mp.fill = residual_colour(std::clamp(*mp.residual / kResidualScaleEnd, -1.0, 1.0));
    if (colouring == MapColouring::trend && mp.trend && trend_end > 0)
      mp.fill = residual_colour(std::clamp(*mp.trend / trend_end, -1.0, 1.0));
    if (colouring != MapColouring::status && mp.state == PlotState::collected) mp.pattern = MapPattern::none;
    mp.text = mp.state == PlotState::not_yet ? theme.text : text_on(mp.fill);
    m.plots.push_back(mp);
  }

  if (colouring == MapColouring::status) {
    int count[5] = {};
    for (const auto& p : m.plots) ++count[static_cast<int>(p.state)];
    const auto label = [&](const char* words, PlotState s) {
      return std::string(words) + " (" + std::to_string(count[static_cast<int>(s)]) + ")";
    };
    m.legend = {{theme.collected, MapPattern::none, label("collected", PlotState::collected)},
                {theme.missing, MapPattern::diagonal, label("no value, reason given", PlotState::missing)},
                {theme.flagged, MapPattern::exclamation, label("value to check", PlotState::to_check)},
                {theme.conflict, MapPattern::cross, label("conflict", PlotState::conflict)},
                {theme.background, MapPattern::outline_only, label("not yet", PlotState::not_yet)}};
  } else if (colouring == MapColouring::value) {
    if (!any_value) m.note = "No values of this trait yet.";
    for (int k = 0; k < 5; ++k) {
      const double v = lo + (hi - lo) * k / 4.0;
      m.legend.push_back({value_colour(k / 4.0), MapPattern::none, any_value ? number_text(v) : std::string()});
    }
    if (any_value) {
      m.scale_low = number_text(lo);
      m.scale_high = number_text(hi);
    }
  } else if (colouring == MapColouring::trend) {
    if (!trend) {
      m.note = reml ? "No field trend: it is fitted for a trial at one site whose plots have field rows and columns."
                    : "No mixed-model analysis of this trait yet: it needs values in every treatment, and on a large "
                      "trial it runs when asked on the Check screen.";
    } else {
      char p[32];
      std::snprintf(p, sizeof p, "%.3g", trend->p);
      m.note = std::string("Fitted field trend (rows and columns correlated, REML): ") +
               (trend->chosen ? "kept, it improves the fit" : "not kept, it does not improve the fit") +
               " (likelihood-ratio P = " + p + "). Blue: lower than the field average; orange: higher.";
    }
    for (int k = -2; k <= 2; ++k)
      m.legend.push_back({residual_colour(k / 2.0), MapPattern::none, number_text(k * trend_end / 2.0)});
    m.scale_low = "-" + number_text(trend_end) + " (poorer ground)";
    m.scale_high = "+" + number_text(trend_end) + " (better ground)";
  } else {
    if (!analysis) m.note = "No interim analysis of this trait yet (it needs values in every treatment).";
    for (int k = -2; k <= 2; ++k)
      m.legend.push_back({residual_colour(k / 2.0), MapPattern::none, number_text(k * kResidualScaleEnd / 2.0)});
    m.scale_low = "-3 or below (lower than expected)";
    m.scale_high = "+3 or above (higher than expected)";
  }
  return m;
}

MapGeometry map_geometry(const FieldMap& map, float cell_px, float header_px) {
  MapGeometry g;
  g.cell = cell_px;
  g.gap = std::max(1.0f, std::round(cell_px * 0.06f));
  g.site_gap = cell_px;
  g.header = header_px;
  g.rows = map.rows;
  g.columns = map.columns;
  const int sites = static_cast<int>(map.site_names.size());
  g.width = sites * map.columns * cell_px + (sites - 1) * g.site_gap;
  g.height = header_px + map.rows * cell_px;
  return g;
}

float MapGeometry::site_x(int site) const { return site * (columns * cell + site_gap); }

MapGeometry::Rect MapGeometry::plot_rect(const MapPlot& p) const {
  const float x = site_x(p.site) + (p.column - 1) * cell;
  const float y = header + (p.row - 1) * cell;
  return {x + gap / 2, y + gap / 2, x + cell - gap / 2, y + cell - gap / 2};
}

int plot_at(const FieldMap& map, const MapGeometry& g, float x, float y) {
  if (g.cell <= 0 || y < g.header) return -1;
  const float span = g.columns * g.cell + g.site_gap;
  const int site = static_cast<int>(std::floor(x / span));
  const float in_site = x - site * span;
  if (site < 0 || site >= static_cast<int>(map.site_names.size()) || in_site >= g.columns * g.cell) return -1;
  const int column = static_cast<int>(in_site / g.cell) + 1;
  const int row = static_cast<int>((y - g.header) / g.cell) + 1;
  for (size_t i = 0; i < map.plots.size(); ++i)
    if (map.plots[i].site == site && map.plots[i].row == row && map.plots[i].column == column) return static_cast<int>(i);
  return -1;
}

}  // namespace furrow
