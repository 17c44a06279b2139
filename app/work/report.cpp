#include "app/work/report.h"
#include "app/work/glossary.h"

#include <cmath>
#include <cstdio>
#include <map>
#include <set>
#include <sstream>

#include "app/work/field_map.h"
#include "app/work/number_text.h"
#include "app/work/trial_analysis.h"
#include "app/work/trial_summary.h"
#include "core/design.h"
#include "storage/settle.h"
#include "storage/text_file.h"
#include "storage/trial_store.h"

namespace furrow {
namespace {

std::string esc(const std::string& s) {
  std::string out;
  for (char c : s) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      default: out += c;
    }
  }
  return out;
}

std::string exact(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

std::string hex(const Rgb& c) {
  char buf[8];
  std::snprintf(buf, sizeof buf, "#%02x%02x%02x", static_cast<int>(std::lround(c.r * 255)),
                static_cast<int>(std::lround(c.g * 255)), static_cast<int>(std::lround(c.b * 255)));
  return buf;
}

// A table cell with the shown text and, for numbers, the exact value.
std::string cell(const std::string& shown) { return "<td>" + esc(shown) + "</td>"; }
std::string num_cell(double v, const std::string& shown) {
  return "<td class=n data-value=\"" + exact(v) + "\">" + esc(shown) + "</td>";
}
std::string opt_cell(const std::optional<double>& v, const std::string& shown) {
  return v ? num_cell(*v, shown) : "<td></td>";
}

constexpr const char* kStyle = R"css(
body { font-family: "DejaVu Sans", Verdana, sans-serif; color: #111; background: #fff; margin: 2em; max-width: 70em; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; }
h2 { font-size: 1.3em; border-bottom: 2px solid #333; margin-top: 1.6em; }
h3 { font-size: 1.1em; margin-top: 1.2em; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border: 1px solid #888; padding: 0.2em 0.6em; text-align: left; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
th { background: #eee; }
.caution { background: #ffd54f; color: #000; padding: 0.6em 1em; font-weight: bold; }
.muted { color: #444; }
.legend span { display: inline-block; margin-right: 1.2em; }
.swatch { display: inline-block; width: 1.1em; height: 1.1em; vertical-align: middle; border: 1px solid #555; margin-right: 0.3em; }
@media print { body { margin: 0; } h2 { page-break-after: avoid; } table { page-break-inside: avoid; } }
)css";

}  // namespace

Result<std::string> report_html(const std::string& db_path, const ReportOptions& options) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return make_problem(db_path + ": " + open.problem().message);
  const StoredTrial& t = open->trial;
  const TrialPlan& p = t.plan;
  auto live = live_observations(open->db, 0);
  if (!live) return make_problem(db_path + ": " + live.problem().message);
  auto conflicts = list_conflicts(open->db, t);
  if (!conflicts) return make_problem(db_path + ": " + conflicts.problem().message);
  size_t map_trait = p.traits.size();
  for (size_t k = 0; k < p.traits.size(); ++k) {
    const bool numeric = p.traits[k].kind != TraitKind::text && p.traits[k].kind != TraitKind::category;
    if (options.map_trait.empty() ? numeric && map_trait == p.traits.size() : p.traits[k].code == options.map_trait)
      map_trait = k;
  }
  if (!options.map_trait.empty() && map_trait == p.traits.size())
    return make_problem("no trait '" + options.map_trait + "' in " + db_path);

  std::ostringstream h;
  h << "<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8><title>" << esc(p.name)
    << " - Furrow report</title><style>" << kStyle << "</style></head><body>\n";
  h << "<h1>" << esc(p.name) << "</h1>\n<p class=muted>" << esc(p.site) << (p.site.empty() ? "" : ", ")
    << esc(p.season) << ". Report written " << esc(utc_now().substr(0, 16)) << " UTC from " << esc(t.uid)
    << ", status: " << esc(t.status) << ".</p>\n";
  if (t.status != "closed")
    h << "<p class=caution>" << esc(kInterimCaution) << " The trial is still being collected.</p>\n";

  // Plan.
  h << "<h2>Plan</h2>\n<table><tbody>";
  h << "<tr><th>Design</th><td>" << esc(design_kind_title(p.design)) << "</td></tr>";
  h << "<tr><th>Replicates</th><td>" << p.replicates << "</td></tr>";
  h << "<tr><th>Field grid</th><td>" << p.rows << " rows x " << p.columns << " columns"
    << (p.sites.size() > 1 ? " at each of " + std::to_string(p.sites.size()) + " sites" : std::string()) << "</td></tr>";
  if (p.plot_length_m > 0)
    h << "<tr><th>Plot size</th><td>" << esc(value_text(p.plot_length_m)) << " m x " << esc(value_text(p.plot_width_m))
      << " m</td></tr>";
  h << "<tr><th>Plots</th><td>" << t.layout.plots.size() << "</td></tr>";
  for (const auto& f : p.factors) {
    std::string levels;
    for (const auto& l : f.levels) levels += (levels.empty() ? "" : ", ") + l;
    h << "<tr><th>Factor " << esc(f.name) << " (" << f.levels.size() << " levels)</th><td>" << esc(levels)
      << "</td></tr>";
  }
  h << "</tbody></table>\n";
  h << "<table><thead><tr><th>Trait</th><th>Name</th><th>Unit</th><th>Kind</th><th>Refused outside</th>"
       "<th>Confirmed outside</th><th>Occasions</th><th>Required</th></tr></thead><tbody>";
  const auto range = [](const std::optional<double>& lo, const std::optional<double>& hi) {
    if (!lo && !hi) return std::string();
    return (lo ? value_text(*lo) : std::string()) + " to " + (hi ? value_text(*hi) : std::string());
  };
  for (const Trait& tr : p.traits)
    h << "<tr>" << cell(tr.code) << cell(tr.name) << cell(tr.unit) << cell(trait_kind_key(tr.kind))
      << cell(range(tr.hard_min, tr.hard_max)) << cell(range(tr.soft_min, tr.soft_max))
      << cell(std::to_string(tr.occasions)) << cell(tr.required ? "yes" : "no") << "</tr>";
  h << "</tbody></table>\n";

  // Completeness.
  const TrialProgress progress = trial_progress(t, *live);
  h << "<h2>Completeness</h2>\n<p>" << progress.cells_done << " of " << progress.cells_required
    << " required cells collected (" << esc(table_number(progress.percent(), 3)) << " %); "
    << count_of(static_cast<long>(conflicts->size()), term::kConflict) << " not settled; last change " << esc(progress.last_change.substr(0, 16)) << " UTC.</p>\n";
  h << "<table><thead><tr><th>Trait</th><th>Occasion</th><th>Values</th><th>No value, reason given</th>"
       "<th>Not recorded</th></tr></thead><tbody>";
  for (size_t k = 0; k < p.traits.size(); ++k)
    for (int occ = 1; occ <= p.traits[k].occasions; ++occ) {
      std::set<std::int64_t> values, reasons;
      for (const auto& x : *live) {
        if (x.trait_id != t.trait_ids[k] || x.occasion != occ) continue;
        if (x.value) values.insert(x.plot_id);
        else if (x.missing_reason && *x.missing_reason != kWithdrawnReason) reasons.insert(x.plot_id);
      }
      std::set<std::int64_t> done = values;
      done.insert(reasons.begin(), reasons.end());
      h << "<tr>" << cell(p.traits[k].code) << cell(std::to_string(occ)) << cell(std::to_string(values.size()))
        << cell(std::to_string(reasons.size())) << cell(std::to_string(t.layout.plots.size() - done.size()))
        << "</tr>";
    }
  h << "</tbody></table>\n";
  if (!conflicts->empty()) {
    h << "<h3>Conflicts to settle</h3><table><thead><tr><th>Plot</th><th>Trait</th><th>Values recorded</th></tr>"
         "</thead><tbody>";
    for (const ConflictCell& c : *conflicts) {
      std::string values;
      for (const auto& r : c.rows)
        values += (values.empty() ? "" : "; ") + r.value.value_or("missing: " + r.missing_reason.value_or("")) +
                  " (" + r.observer + ")";
      h << "<tr>" << cell(t.layout.plots[c.plot_index].label) << cell(p.traits[c.trait_index].code) << cell(values)
        << "</tr>";
    }
    h << "</tbody></table>\n";
  }

  // A field map as inline SVG: every plot at its place, filled as the map says.
  const auto svg_map = [&](const FieldMap& m, const char* aria) {
    const float cellpx = std::max(14.0f, std::min(44.0f, 1000.0f / std::max(1, m.columns * static_cast<int>(m.site_names.size()))));
    const MapGeometry g = map_geometry(m, cellpx, m.site_names.size() > 1 ? 18.0f : 0.0f);
    h << "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" << g.width << "\" height=\"" << g.height
      << "\" viewBox=\"0 0 " << g.width << " " << g.height << "\" role=img aria-label=\"" << aria << "\">\n";
    for (size_t s = 0; s < m.site_names.size() && g.header > 0; ++s)
      h << "<text x=\"" << g.site_x(static_cast<int>(s)) << "\" y=\"13\" font-size=\"13\">" << esc(m.site_names[s])
        << "</text>";
    for (const MapPlot& mp : m.plots) {
      const auto r = g.plot_rect(mp);
      const std::string fill = mp.state == PlotState::not_yet ? "#ffffff" : hex(mp.fill);
      h << "<g class=plot data-plot=\"" << esc(t.layout.plots[mp.plot_index].label) << "\"";
      if (mp.value) h << " data-value=\"" << exact(*mp.value) << "\"";
      if (mp.trend) h << " data-trend=\"" << exact(*mp.trend) << "\"";
      h << "><title>plot " << esc(t.layout.plots[mp.plot_index].label)
        << (mp.value ? ": " + value_text(*mp.value) : std::string()) << "</title><rect x=\"" << r.x0 << "\" y=\""
        << r.y0 << "\" width=\"" << (r.x1 - r.x0) << "\" height=\"" << (r.y1 - r.y0) << "\" fill=\"" << fill
        << "\" stroke=\"#555\" stroke-width=\"0.5\"/>";
      const std::string ink = hex(text_on(mp.fill));
      if (mp.state == PlotState::missing)
        h << "<line x1=\"" << r.x0 + 2 << "\" y1=\"" << r.y1 - 2 << "\" x2=\"" << r.x1 - 2 << "\" y2=\"" << r.y0 + 2
          << "\" stroke=\"" << ink << "\" stroke-width=\"2\"/>";
      if (mp.state == PlotState::conflict)
        h << "<path d=\"M" << r.x0 + 3 << " " << r.y0 + 3 << "L" << r.x1 - 3 << " " << r.y1 - 3 << "M" << r.x0 + 3
          << " " << r.y1 - 3 << "L" << r.x1 - 3 << " " << r.y0 + 3 << "\" stroke=\"" << ink
          << "\" stroke-width=\"2\"/>";
      if (cellpx >= 30)
        h << "<text x=\"" << r.x0 + 2 << "\" y=\"" << r.y0 + 11 << "\" font-size=\"9\" fill=\"" << ink << "\">"
          << esc(t.layout.plots[mp.plot_index].label) << "</text>";
      h << "</g>\n";
    }
    h << "</svg>\n<p class=legend>";
    for (const LegendEntry& e : m.legend)
      h << "<span><span class=swatch style=\"background:" << hex(e.fill) << "\"></span>" << esc(e.label) << "</span>";
    h << "</p>\n";
  };

  // Field map.
  if (map_trait < p.traits.size()) {
    const Theme theme = make_theme(ThemeKind::daylight);
    const FieldMap m = build_field_map(t, *live, map_trait, 1, MapColouring::value, theme, nullptr, nullptr);
    h << "<h2>Field map: " << esc(p.traits[map_trait].name) << "</h2>\n<p class=muted>Row 1 at the top, column 1 "
         "on the left; colour from low (dark blue) to high (yellow); a cross marks a conflict, a diagonal a plot "
         "without a value; blank plots are not recorded yet.</p>\n";
    svg_map(m, "field map");
  }

  // The layout as a table: every plot's place and treatment.
  h << "<details><summary>Layout: every plot's block, field position and treatment</summary>\n<table class=layout>"
       "<thead><tr><th>Plot</th>" << (p.sites.size() > 1 ? "<th>Site</th>" : "") << "<th>Block</th><th>Row</th>"
       "<th>Column</th><th>Treatment</th></tr></thead><tbody>";
  for (const PlannedPlot& pl : t.layout.plots) {
    h << "<tr>" << cell(pl.label);
    if (p.sites.size() > 1) h << cell(p.sites[pl.site]);
    h << cell(std::to_string(pl.block)) << cell(std::to_string(pl.row)) << cell(std::to_string(pl.column))
      << cell(treatment_label(p, pl.levels)) << "</tr>";
  }
  h << "</tbody></table></details>\n";

  // Analyses.
  h << "<h2>Analyses</h2>\n";
  constexpr size_t kReportRemlPlots = 3000;
  AnalysisOptions ao;
  ao.alpha = options.alpha;
  for (size_t k = 0; k < p.traits.size(); ++k) {
    const Trait& tr = p.traits[k];
    if (tr.kind == TraitKind::text || tr.kind == TraitKind::category) continue;
    for (int occ = 1; occ <= tr.occasions; ++occ) {
      h << "<section class=analysis data-trait=\"" << esc(tr.code) << "\" data-occasion=\"" << occ << "\">\n<h3>"
        << esc(tr.name) << (tr.unit.empty() ? "" : " (" + esc(tr.unit) + ")")
        << (tr.occasions > 1 ? ", occasion " + std::to_string(occ) : std::string()) << "</h3>\n";
      auto a = analyse_trial_trait(t, *live, k, occ, ao);
      if (!a) {
        h << "<p>Not analysed yet: " << esc(a.problem().message) << "</p></section>\n";
        continue;
      }
      h << "<p>" << a->n << " plots analysed" << (a->n_missing ? ", " + std::to_string(a->n_missing) + " without a value" : "")
        << ". Grand mean <span data-name=grand_mean data-value=\"" << exact(a->grand_mean) << "\">"
        << esc(table_number(a->grand_mean, digits_for(a->grand_mean, a->residual_sd, 5))) << "</span>, CV <span data-name=cv_percent data-value=\""
        << exact(a->cv_percent) << "\">" << esc(table_number(a->cv_percent, 3)) << "</span> %";
      if (a->lsd)
        h << ", " << term::lsd_title(ao.alpha) << " <span data-name=lsd data-value=\"" << exact(*a->lsd) << "\">"
          << esc(table_number(*a->lsd, 4)) << "</span>";
      if (a->hsd)
        h << ", " << term::hsd_title(ao.alpha) << " <span data-name=hsd data-value=\"" << exact(*a->hsd) << "\">"
          << esc(table_number(*a->hsd, 4)) << "</span>";
      if (a->mdd_percent)
        h << ", smallest difference detectable with 80 % power <span data-name=mdd_percent data-value=\""
          << exact(*a->mdd_percent) << "\">" << esc(table_number(*a->mdd_percent, 3)) << "</span> % of the mean";
      h << ".</p>\n";
      h << "<table class=anova><thead><tr><th>Term</th><th>DF</th><th>SS</th><th>MS</th><th>F</th><th>P</th>"
           "<th>" << term::kTestedAgainst << "</th></tr></thead><tbody>";
      for (const AnovaRow& r : a->table)
        h << "<tr>" << cell(r.source) << num_cell(r.df, df_text(r.df)) << num_cell(r.ss, table_number(r.ss))
          << opt_cell(r.ms, r.ms ? table_number(*r.ms) : "") << opt_cell(r.f, r.f ? table_number(*r.f, 4) : "")
          << opt_cell(r.p, r.p ? p_text(*r.p) : "") << cell(r.error_term) << "</tr>";
      h << "</tbody></table>\n";
      for (const TermMeans& m : a->means) {
        h << "<table class=means data-term=\"" << esc(m.term) << "\"><thead><tr><th>" << esc(m.term)
          << "</th><th>" << term::kPlots << "</th><th>" << term::kMean << "</th><th>" << term::kSe << "</th><th>"
          << term::kLsdGroup << "</th><th>" << term::kHsdGroup << "</th></tr></thead><tbody>";
        for (const MeanRow& r : m.levels)
          h << "<tr>" << cell(r.label) << cell(std::to_string(r.n))
            << (r.estimable ? num_cell(r.mean, table_number(r.mean, digits_for(a->grand_mean, a->residual_sd, 5))) : cell("-"))
            << (r.estimable ? num_cell(r.se, table_number(r.se, 3)) : cell("-")) << cell(r.group_lsd)
            << cell(r.group_hsd) << "</tr>";
        h << "</tbody></table>\n<p class=muted>" << (m.adjusted ? "Adjusted (least-squares) means. " : "")
          << "SE of a difference " << esc(table_number(m.sed, 4)) << "; error: " << esc(m.error_term)
          << ". Means sharing a letter do not differ at alpha " << esc(value_text(ao.alpha)) << ".</p>\n";
      }
      const VarianceComponents& vc = a->variance_components;
      h << "<p>Variance components: ";
      if (vc.error) h << "error " << esc(table_number(*vc.error)) << "; ";
      if (vc.main_plot_error) h << "main-plot error " << esc(table_number(*vc.main_plot_error)) << "; ";
      if (vc.treatment) h << "treatment " << esc(table_number(*vc.treatment)) << "; ";
      if (vc.treatment_by_site) h << "treatment x site " << esc(table_number(*vc.treatment_by_site)) << "; ";
      if (vc.heritability) h << "heritability (entry means) " << esc(table_number(*vc.heritability, 3)) << "; ";
      h << "share of total SS:";
      for (const VarianceShare& s : vc.shares) h << " " << esc(s.source) << " " << esc(table_number(100 * s.share, 3)) << " %";
      h << ".</p>\n";
      if (a->outliers.empty()) {
        h << "<p>Outlier plots (" << esc(a->outlier_rule) << "): none.</p>\n";
      } else {
        h << "<table class=outliers><thead><tr><th>Outlier plot</th><th>Value</th><th>Expected</th>"
             "<th>Studentized residual</th></tr></thead><tbody>";
        for (const OutlierPlot& o : a->outliers)
          h << "<tr>" << cell(t.layout.plots[o.record].label) << num_cell(o.value, value_text(o.value))
            << num_cell(o.expected, value_text(o.expected))
            << num_cell(o.studentized_external, table_number(o.studentized_external, 3)) << "</tr>";
        h << "</tbody></table>\n<p class=muted>Rule: " << esc(a->outlier_rule) << ".</p>\n";
      }
      if (!a->missing_cells.empty()) {
        h << "<p>Missing treatment cells:";
        for (const MissingCell& c : a->missing_cells) h << " " << esc(c.label) << ";";
        h << "</p>\n";
      }
      for (const auto& n : a->notes) h << "<p class=muted>Note: " << esc(n) << "</p>\n";
      // The mixed-model check (REML), with a field-trend test at a one-site trial.
      if (t.layout.plots.size() > kReportRemlPlots) {
        h << "<p class=muted>Mixed-model check (REML): not run for a trial of over " << kReportRemlPlots
          << " plots in the report; the command line runs it (analyze --method reml).</p>\n";
      } else if (auto r = reml_trial_trait(t, *live, k, occ, ao, FieldTrendChoice::test); !r) {
        h << "<p class=muted>Mixed-model check (REML) not available: " << esc(r.problem().message) << "</p>\n";
      } else {
        h << "<div class=reml data-differs=\"" << (r->differs_because.empty() ? "no" : "yes") << "\">";
        if (r->differs_because.empty()) {
          h << "<p>Mixed-model check (REML): the same answer; the analysis of variance is exact for these data.</p>";
        } else {
          h << "<p>Mixed-model check (REML) differs from the analysis of variance because:</p><ul>";
          for (const auto& why : r->differs_because) h << "<li>" << esc(why) << "</li>";
          h << "</ul><table class=reml_tests><thead><tr><th>Term</th><th>DF</th><th>Denominator DF</th><th>F</th>"
               "<th>P</th></tr></thead><tbody>";
          for (const MixedTermTest& x : r->tests)
            h << "<tr>" << cell(x.source)
              << (x.estimable ? num_cell(x.num_df, df_text(x.num_df)) + num_cell(x.den_df, table_number(x.den_df, 3)) +
                                    num_cell(x.f, table_number(x.f, 4)) + num_cell(x.p, p_text(x.p))
                              : cell(term::kNotEstimable) + cell("") + cell("") + cell(""))
              << "</tr>";
          h << "</tbody></table>";
        }
        h << "<p>REML variance components:";
        for (const ComponentEstimate& c : r->components)
          h << " " << esc(c.source) << " " << esc(table_number(c.variance, 4))
            << (c.at_bound ? " (held at bound)" : " (SE " + esc(table_number(c.se, 3)) + ")") << ";";
        if (r->heritability) h << " heritability (Cullis, Smith & Coombes 2006) " << esc(table_number(*r->heritability, 3)) << ";";
        h << "</p>";
        if (r->trend) {
          const FieldTrendFit& f = *r->trend;
          h << "<p class=trend data-kept=\"" << (f.chosen ? "yes" : "no") << "\">Field trend (rows and columns "
            << "correlated, AR1 x AR1): " << (f.chosen ? "kept" : "not kept") << ", likelihood-ratio P "
            << esc(p_text(f.p)) << "; autocorrelation down rows " << esc(table_number(f.rho_row, 2))
            << ", across columns " << esc(table_number(f.rho_col, 2)) << ".</p>";
          if (f.chosen) {
            const FieldMap fm = build_field_map(t, *live, k, occ, MapColouring::trend, make_theme(ThemeKind::daylight),
                                                nullptr, nullptr, &*r);
            h << "<p class=muted>" << esc(fm.note) << "</p>\n";
            svg_map(fm, "fitted field trend");
          }
        }
        h << "</div>\n";
      }
      h << "</section>\n";
    }
  }
  h << "<p class=muted>In the field, respect the re-entry intervals on plots treated with crop-protection products, "
       "heat and machinery; local rules and the station's safety officer decide.</p>\n</body></html>\n";
  return h.str();
}

Status write_report(const std::string& db_path, const std::string& out_path, const ReportOptions& options) {
  auto html = report_html(db_path, options);
  if (!html) return html.problem();
  return write_text_file(out_path, *html);
}

}  // namespace furrow
