// The Field map's content: plot states from the log, colour scales readable
// with colour-vision deficiencies, positions and taps.

#include "app/work/field_map.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <map>

#include "app/work/record_session.h"
#include "app/work/trial_analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

double linear(double c) { return c <= 0.04045 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4); }
double gamma(double c) {
  c = std::clamp(c, 0.0, 1.0);
  return c <= 0.0031308 ? 12.92 * c : 1.055 * std::pow(c, 1 / 2.4) - 0.055;
}

// Simulated dichromat vision: Machado, Oliveira & Fernandes (2009), "A
// physiologically-based model for simulation of color vision deficiency",
// IEEE TVCG 15(6), matrices for severity 1.0 on linear RGB (values recalled
// from memory of the paper's table).
using Matrix = double[3][3];
constexpr Matrix kProtanopia = {{0.152286, 1.052583, -0.204868}, {0.114503, 0.786281, 0.099216},
                                {-0.003882, -0.048116, 1.051998}};
constexpr Matrix kDeuteranopia = {{0.367322, 0.860646, -0.227968}, {0.280085, 0.672501, 0.047413},
                                  {-0.011820, 0.042940, 0.968881}};
constexpr Matrix kTritanopia = {{1.255528, -0.076749, -0.178779}, {-0.078411, 0.930809, 0.147602},
                                {0.004733, 0.691367, 0.303900}};

Rgb simulate(const Rgb& c, const Matrix& m) {
  const double l[3] = {linear(c.r), linear(c.g), linear(c.b)};
  double o[3];
  for (int i = 0; i < 3; ++i) o[i] = m[i][0] * l[0] + m[i][1] * l[1] + m[i][2] * l[2];
  return {static_cast<float>(gamma(o[0])), static_cast<float>(gamma(o[1])), static_cast<float>(gamma(o[2]))};
}

// CIE 1976 L*a*b* (D65) and the colour difference Delta E*ab.
std::array<double, 3> lab(const Rgb& c) {
  const double r = linear(c.r), g = linear(c.g), b = linear(c.b);
  const double x = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
  const double y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  const double z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
  const auto f = [](double t) { return t > 216.0 / 24389 ? std::cbrt(t) : (24389.0 / 27 * t + 16) / 116; };
  return {116 * f(y) - 16, 500 * (f(x) - f(y)), 200 * (f(y) - f(z))};
}
double delta_e(const Rgb& a, const Rgb& b) {
  const auto p = lab(a), q = lab(b);
  return std::sqrt(std::pow(p[0] - q[0], 2) + std::pow(p[1] - q[1], 2) + std::pow(p[2] - q[2], 2));
}

TEST_CASE("the value scale gets lighter all the way, so order reads without hue") {
  double last = -1;
  for (int k = 0; k <= 256; ++k) {
    const double l = relative_luminance(value_colour(k / 256.0));
    CHECK(l > last);
    last = l;
  }
  // And for every simulated dichromat too.
  for (const Matrix* m : {&kProtanopia, &kDeuteranopia, &kTritanopia}) {
    double prev = -1;
    for (int k = 0; k <= 32; ++k) {
      const double l = lab(simulate(value_colour(k / 32.0), *m))[0];
      CHECK(l > prev);
      prev = l;
    }
  }
}

TEST_CASE("the residual scale keeps its two sides apart for each dichromat") {
  for (const Matrix* m : {&kProtanopia, &kDeuteranopia, &kTritanopia}) {
    const Rgb low = simulate(residual_colour(-1), *m), high = simulate(residual_colour(1), *m);
    const Rgb mid = simulate(residual_colour(0), *m);
    // 10 Delta E is far beyond a just-noticeable difference (about 2.3; Sharma 2003).
    CHECK(delta_e(low, high) > 20);
    CHECK(delta_e(low, mid) > 20);
    CHECK(delta_e(high, mid) > 20);
  }
}

TEST_CASE("status colours differ for normal vision and each dichromat, in both themes") {
  for (ThemeKind kind : {ThemeKind::daylight, ThemeKind::dark}) {
    const Theme t = make_theme(kind);
    const Rgb status[] = {t.collected, t.missing, t.flagged, t.conflict, t.background};
    for (const Matrix* m : {static_cast<const Matrix*>(nullptr), &kProtanopia, &kDeuteranopia, &kTritanopia})
      for (int i = 0; i < 5; ++i)
        for (int j = i + 1; j < 5; ++j) {
          const Rgb a = m ? simulate(status[i], *m) : status[i], b = m ? simulate(status[j], *m) : status[j];
          CAPTURE(i);
          CAPTURE(j);
          CAPTURE(static_cast<int>(kind));
          // Each state also has its own pattern; colour alone must still tell them apart.
          CHECK(delta_e(a, b) > 10);
        }
  }
}

TEST_CASE("text on a plot is black or white, whichever contrasts more") {
  CHECK(text_on(value_colour(0)).r == 1.0f);   // white on dark blue
  CHECK(text_on(value_colour(1)).r == 0.0f);   // black on yellow
  for (int k = 0; k <= 16; ++k) {
    const Rgb fill = value_colour(k / 16.0);
    CHECK(contrast_ratio(text_on(fill), fill) >= 4.5);   // WCAG 2.1 SC 1.4.3
  }
}

struct DemoMap {
  DemoMap() : path(test::demo_day_trial("field_map_test.furrow")) {
    auto s = RecordSession::open(path, "Mara");
    REQUIRE(s.ok());
    session.emplace(std::move(s).value());
  }
  size_t index_of(const std::string& label) const {
    const auto& plots = session->trial().layout.plots;
    for (size_t i = 0; i < plots.size(); ++i)
      if (plots[i].label == label) return i;
    FAIL("no plot " << label);
    return 0;
  }
  std::string path;
  std::optional<RecordSession> session;
  Theme theme = make_theme(ThemeKind::daylight);
};

TEST_CASE("status map of the demo day: flooded plot without a value, the slip to check, the rest collected") {
  DemoMap d;
  const StoredTrial& t = d.session->trial();
  // The map of a trait marks what Before leaving asks about that trait.
  const BeforeLeaving leaving = before_leaving(t, d.session->live(), 0.05, Walk(t, WalkChoice{{"height_cm"}, 1, {}, false}));
  const FieldMap m = build_field_map(t, d.session->live(), 1, 1, MapColouring::status, d.theme, &leaving, nullptr);
  REQUIRE(m.plots.size() == 80);
  CHECK(m.rows == t.plan.rows);
  CHECK(m.columns == t.plan.columns);
  std::map<PlotState, int> count;
  for (const MapPlot& p : m.plots) ++count[p.state];
  CHECK(m.plots[d.index_of("214")].state == PlotState::missing);
  CHECK(m.plots[d.index_of("214")].pattern == MapPattern::diagonal);
  CHECK(m.plots[d.index_of("307")].state == PlotState::to_check);
  CHECK(m.plots[d.index_of("307")].pattern == MapPattern::exclamation);
  CHECK(count[PlotState::collected] == 78);
  CHECK(m.legend.size() == 5);
  CHECK(m.legend[0].label == "collected (78)");
  // Heading (trait 2) is not collected yet: every plot waits.
  const FieldMap h = build_field_map(t, d.session->live(), 2, 1, MapColouring::status, d.theme, &leaving, nullptr);
  for (const MapPlot& p : h.plots) CHECK(p.state == PlotState::not_yet);
}

TEST_CASE("value and residual maps take their numbers from the log and the interim analysis") {
  DemoMap d;
  const StoredTrial& t = d.session->trial();
  const FieldMap v = build_field_map(t, d.session->live(), 1, 1, MapColouring::value, d.theme, nullptr, nullptr);
  const MapPlot& slip = v.plots[d.index_of("307")];
  REQUIRE(slip.value.has_value());
  CHECK(*slip.value == doctest::Approx(8.3));
  CHECK(v.scale_low == "8.3");   // the slip is the lowest height of the day
  // The lowest value takes the dark end of the scale.
  CHECK(delta_e(slip.fill, value_colour(0)) < 1e-3);
  AnalysisOptions options;
  const auto a = analyse_trial_trait(t, d.session->live(), 1, 1, options);
  REQUIRE(a.ok());
  const FieldMap r = build_field_map(t, d.session->live(), 1, 1, MapColouring::residual, d.theme, nullptr, &*a);
  const MapPlot& slip_r = r.plots[d.index_of("307")];
  REQUIRE(slip_r.residual.has_value());
  CHECK(*slip_r.residual < -3);   // far below what its block and entry predict
  CHECK(delta_e(slip_r.fill, residual_colour(-1)) < 1e-3);
  CHECK_FALSE(r.plots[d.index_of("214")].residual.has_value());   // no value, no residual
  CHECK(r.note.empty());
  const FieldMap none = build_field_map(t, d.session->live(), 1, 1, MapColouring::residual, d.theme, nullptr, nullptr);
  CHECK_FALSE(none.note.empty());
}

TEST_CASE("field trend map: each plot takes the REML fitted trend at its own row and column") {
  DemoMap d;
  const StoredTrial& t = d.session->trial();
  AnalysisOptions options;
  const auto r = reml_trial_trait(t, d.session->live(), 1, 1, options, FieldTrendChoice::always);
  REQUIRE(r.ok());
  REQUIRE(r->trend.has_value());
  const FieldTrendFit& f = *r->trend;
  const FieldMap m = build_field_map(t, d.session->live(), 1, 1, MapColouring::trend, d.theme, nullptr, nullptr, &*r);
  double end = 0;
  for (double v : f.record_trend) end = std::max(end, std::abs(v));
  REQUIRE(end > 0);
  for (const MapPlot& p : m.plots) {
    const PlannedPlot& pp = t.layout.plots[p.plot_index];
    const double want = f.trend[(pp.column - f.first_col) * f.rows + (pp.row - f.first_row)];
    REQUIRE(p.trend.has_value());
    CHECK(*p.trend == doctest::Approx(want));
    if (p.state == PlotState::collected) CHECK(delta_e(p.fill, residual_colour(std::clamp(want / end, -1.0, 1.0))) < 1e-3);
  }
  // The flooded plot has no value but the field still has a trend there.
  CHECK(m.plots[d.index_of("214")].trend.has_value());
  CHECK(m.note.find("Fitted field trend") != std::string::npos);
  CHECK(m.legend.size() == 5);
  const FieldMap none = build_field_map(t, d.session->live(), 1, 1, MapColouring::trend, d.theme, nullptr, nullptr);
  CHECK_FALSE(none.note.empty());
}

TEST_CASE("plot positions: row 1 at the top, column 1 on the left, sites side by side; taps find the plot") {
  FieldMap m;
  m.rows = 2;
  m.columns = 3;
  m.site_names = {"north", "south"};
  for (int s = 0; s < 2; ++s)
    for (int r = 1; r <= 2; ++r)
      for (int c = 1; c <= 3; ++c) {
        MapPlot p;
        p.plot_index = m.plots.size();
        p.site = s;
        p.row = r;
        p.column = c;
        m.plots.push_back(p);
      }
  const MapGeometry g = map_geometry(m, 50, 20);
  CHECK(g.width == doctest::Approx(2 * 3 * 50 + 50));
  CHECK(g.height == doctest::Approx(20 + 2 * 50));
  const auto r = g.plot_rect(m.plots[4]);   // site 0, row 2, column 2
  CHECK(r.x0 > 50);
  CHECK(r.x1 < 100);
  CHECK(r.y0 > 70);
  CHECK(plot_at(m, g, 75, 95) == 4);
  CHECK(plot_at(m, g, 200 + 25, 20 + 25) == 6);   // south site, row 1, column 1
  CHECK(plot_at(m, g, 175, 45) == -1);           // the gap between sites
  CHECK(plot_at(m, g, 75, 10) == -1);            // the site header
}

}  // namespace
}  // namespace furrow
