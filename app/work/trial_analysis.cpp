#include "app/work/trial_analysis.h"

#include <cstdio>
#include <map>
#include <set>

namespace furrow {

namespace {

struct TrialTable {
  PlotTable table;
  DesignRoles roles;
  std::string response;
};

Result<TrialTable> trial_table(const StoredTrial& t, const std::vector<LiveObservation>& live, size_t trait_index,
                               int occasion) {
  const Trait* trait = &t.plan.traits[trait_index];
  if (trait->kind == TraitKind::text || trait->kind == TraitKind::category)
    return make_problem(trait->code + " is not numeric; it cannot be analysed");
  const std::int64_t trait_id = t.trait_ids[trait_index];
  std::map<std::int64_t, std::set<std::string>> values;
  std::map<std::int64_t, std::string> number_text;
  for (const auto& x : live) {
    if (x.trait_id != trait_id || x.occasion != occasion) continue;
    values[x.plot_id].insert(value_identity(x));   // agreeing values are one
    if (x.number) {
      char buf[40];
      std::snprintf(buf, sizeof buf, "%.17g", *x.number);
      number_text[x.plot_id] = x.value && trait->kind != TraitKind::date ? *x.value : buf;
    }
  }
  PlotTable table;
  table.columns.push_back({"plot", {}});
  table.columns.push_back({"site", {}});
  table.columns.push_back({"block", {}});
  table.columns.push_back({"field_row", {}});
  table.columns.push_back({"field_column", {}});
  for (const auto& f : t.plan.factors) table.columns.push_back({f.name, {}});
  table.columns.push_back({trait->code, {}});
  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    const PlannedPlot& p = t.layout.plots[i];
    table.columns[0].cells.push_back(p.label);
    table.columns[1].cells.push_back(t.plan.sites.empty() ? std::string() : t.plan.sites[p.site]);
    table.columns[2].cells.push_back(std::to_string(p.block));
    table.columns[3].cells.push_back(std::to_string(p.row));
    table.columns[4].cells.push_back(std::to_string(p.column));
    for (size_t k = 0; k < p.levels.size(); ++k) table.columns[5 + k].cells.push_back(t.plan.factors[k].levels[p.levels[k]]);
    const auto it = values.find(t.plot_ids[i]);
    // Conflicting cells are left out of the analysis until they are settled.
    const bool usable = it != values.end() && it->second.size() == 1 && number_text.count(t.plot_ids[i]);
    table.columns.back().cells.push_back(usable ? number_text[t.plot_ids[i]] : "");
  }
  DesignRoles roles;
  roles.kind = t.plan.design;
  for (const auto& f : t.plan.factors) roles.treatments.push_back(f.name);
  switch (t.plan.design) {
    case DesignKind::randomised_complete_block:
    case DesignKind::factorial:
      roles.block = "block";
      break;
    case DesignKind::latin_square:
      roles.row = "field_row";
      roles.column = "field_column";
      break;
    case DesignKind::split_plot:
      roles.block = "block";
      roles.main_plot = t.plan.factors[0].name;
      roles.sub_plot = t.plan.factors[1].name;
      roles.treatments.clear();
      break;
    case DesignKind::multi_site:
      roles.site = "site";
      roles.block = "block";
      break;
    default:
      break;
  }
  return TrialTable{std::move(table), std::move(roles), trait->code};
}

}  // namespace

Result<Analysis> analyse_trial_trait(const StoredTrial& t, const std::vector<LiveObservation>& live,
                                     size_t trait_index, int occasion, const AnalysisOptions& options) {
  auto tt = trial_table(t, live, trait_index, occasion);
  if (!tt) return tt.problem();
  return analyse(tt->table, tt->roles, tt->response, options);
}

Result<MixedAnalysis> reml_trial_trait(const StoredTrial& t, const std::vector<LiveObservation>& live,
                                       size_t trait_index, int occasion, const AnalysisOptions& options,
                                       FieldTrendChoice trend) {
  auto tt = trial_table(t, live, trait_index, occasion);
  if (!tt) return tt.problem();
  tt->roles.without_interaction = options.without_interaction;
  MixedAnalysisOptions mo;
  mo.alpha = options.alpha;
  mo.comparisons = options.comparisons;
  mo.trend = trend;
  mo.row_column = "field_row";
  mo.col_column = "field_column";
  // Field trend is fitted one site at a time: a trial over several sites is left without it.
  if (t.plan.sites.size() > 1) mo.trend = FieldTrendChoice::off;
  return analyse_reml(tt->table, tt->roles, tt->response, mo);
}

}  // namespace furrow
