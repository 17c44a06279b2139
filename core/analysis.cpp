// analysis.cpp: from a table of text cells to a finished interim analysis.
//
// Index:
//   [input]       response parsing, factor coding, structural checks
//   [table]       analysis-of-variance rows and error terms
//   [means]       means, comparisons, letters
//   [components]  variance components and heritability
//   [residuals]   studentized residuals and outlier plots
//   [missing]     missing treatment x block cells
//   [driver]      analyse_all / analyse

#include "core/analysis.h"
#include "core/text.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <set>
#include <string_view>
#include <unordered_map>
#include <unordered_set>

#include "core/distributions.h"
#include "core/exact_decimal.h"
#include "core/letter_groups.h"
#include "core/studentized_range.h"

namespace furrow {

const char* sums_kind_key(SumsKind kind) { return kind == SumsKind::sequential ? "sequential" : "partial"; }

const DataColumn* PlotTable::find(const std::string& name) const {
  for (const DataColumn& c : columns)
    if (c.name == name) return &c;
  return nullptr;
}

bool is_missing_text(const std::string& cell) {
  size_t b = 0, e = cell.size();
  while (b < e && std::isspace(static_cast<unsigned char>(cell[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(cell[e - 1]))) --e;
  const std::string_view v(cell.data() + b, e - b);
  return v.empty() || v == "NA" || v == ".";
}

namespace {

// ------------------------------------------------------------------ [input]

struct ParsedResponse {
  std::vector<char> present;           // per record
  std::vector<ExactDecimal> values;    // per present record, in order
};

Result<ParsedResponse> parse_response(const DataColumn& column) {
  ParsedResponse out;
  out.present.assign(column.cells.size(), 0);
  for (size_t r = 0; r < column.cells.size(); ++r) {
    if (is_missing_text(column.cells[r])) continue;
    auto value = parse_exact_decimal(column.cells[r]);
    if (!value) return make_problem(value.problem().message + " (expected a number)", column.name, static_cast<int>(r));
    out.present[r] = 1;
    out.values.push_back(*value);
  }
  if (out.values.empty()) return make_problem("column '" + column.name + "' has no values", column.name);
  return out;
}

// Everything that depends only on which plots have a value.
struct Group {
  std::vector<int> records;                           // input records analysed
  CodedDesign coded;
  std::vector<std::vector<std::string>> level_names;  // per factor, per code
  std::optional<LinearModel> model;
  std::optional<Problem> problem;
  std::vector<MissingCell> missing_cells;   // same for every response of the group
  // Cells of treatment interactions and stratum errors with no plot at all:
  // per term index, each empty cell's level codes.
  std::vector<std::pair<int, std::vector<std::vector<int>>>> empty_cells;
  std::vector<std::string> notes;           // said with every response of the group
};

std::string cell_label(const DesignModel& m, const std::vector<int>& factors,
                       const std::vector<std::vector<std::string>>& names, const std::vector<int>& levels) {
  std::vector<std::string> parts;
  for (size_t k = 0; k < factors.size(); ++k)
    parts.push_back(m.factor_columns[factors[k]] + " " + names[factors[k]][levels[k]]);
  return join(parts, " x ");
}

void prepare_group(const PlotTable& table, const DesignModel& m, const AnalysisOptions& options, Group* g) {
  const int nf = static_cast<int>(m.factor_columns.size());
  g->coded.n = static_cast<int>(g->records.size());
  g->level_names.assign(nf, {});
  for (int f = 0; f < nf; ++f) {
    const DataColumn* col = table.find(m.factor_columns[f]);
    std::unordered_map<std::string, int> code_of;
    CodedFactor cf;
    for (int r : g->records) {
      const std::string v = trimmed(col->cells[r]);
      if (v.empty()) {
        g->problem = make_problem("empty '" + col->name + "' for a plot that has a value", col->name, r);
        return;
      }
      auto [it, inserted] = code_of.emplace(v, static_cast<int>(code_of.size()));
      if (inserted) g->level_names[f].push_back(v);
      cf.codes.push_back(it->second);
    }
    cf.levels = static_cast<int>(code_of.size());
    const bool nested_block = f == m.block_factor && m.site_factor >= 0;
    if (cf.levels < 2 && !nested_block) {
      g->problem = make_problem("column '" + col->name + "' has only one level ('" + g->level_names[f][0] +
                                    "') among the plots with a value; the design needs at least two",
                                col->name, g->records.front());
      return;
    }
    g->coded.factors.push_back(std::move(cf));
  }
  // A treatment level none of whose plots has a value drops out of the
  // analysis: say so (its plots are listed as missing cells).
  for (int f : m.treatment_factors) {
    if (static_cast<int>(g->records.size()) == table.records()) break;   // every plot has a value
    const DataColumn* col = table.find(m.factor_columns[f]);
    std::unordered_set<std::string_view> coded(g->level_names[f].begin(), g->level_names[f].end());
    std::set<std::string> absent;
    for (const std::string& cell : col->cells) {
      std::string_view v = cell;
      while (!v.empty() && std::isspace(static_cast<unsigned char>(v.front()))) v.remove_prefix(1);
      while (!v.empty() && std::isspace(static_cast<unsigned char>(v.back()))) v.remove_suffix(1);
      if (!v.empty() && !coded.count(v)) absent.insert(std::string(v));
    }
    if (!absent.empty()) {
      std::vector<std::string> names(absent.begin(), absent.end());
      if (names.size() > 6) names.resize(6), names.push_back("...");
      g->notes.push_back(std::to_string(absent.size()) + " level" + (absent.size() == 1 ? "" : "s") + " of '" +
                         col->name + "' with no plot that has a value, left out of the analysis: " + join(names, ", "));
    }
  }
  for (int t = 0; t < static_cast<int>(m.terms.size()); ++t) {
    g->coded.terms.push_back(m.terms[t].factors);
    if (m.terms[t].role == TermRole::treatment) g->coded.means_terms.push_back(t);
  }
  g->coded.grid_groups = m.grid_groups;
  // Treatment combinations (and main plots) without any plot: the model is
  // fitted all the same; what they leave inestimable is said with the means.
  for (int t = 0; t < static_cast<int>(m.terms.size()); ++t) {
    const ModelTerm& term = m.terms[t];
    if (term.role == TermRole::blocking || term.factors.size() < 2) continue;
    const TermCells cells = term_cells(g->coded, term.factors);
    std::set<std::vector<int>> seen(cells.levels.begin(), cells.levels.end());
    std::vector<std::vector<int>> empty;
    std::vector<int> levels(term.factors.size(), 0);
    while (true) {
      if (!seen.count(levels)) empty.push_back(levels);
      size_t k = 0;
      while (k < levels.size() && ++levels[k] == g->coded.factors[term.factors[k]].levels) { levels[k] = 0; ++k; }
      if (k == levels.size()) break;
    }
    if (empty.empty()) continue;
    const size_t shown = std::min<size_t>(empty.size(), 6);
    std::vector<std::string> list;
    for (size_t k = 0; k < shown; ++k) list.push_back(cell_label(m, term.factors, g->level_names, empty[k]));
    g->notes.push_back("no plot has a value in " + std::to_string(empty.size()) +
                       (empty.size() == 1 ? " cell" : " cells") + " of '" + term.label + "': " + join(list, "; ") +
                       (shown < empty.size() ? "; ..." : "") +
                       (term.role == TermRole::treatment
                            ? ". The model is fitted with what was measured; the means that need those cells are not "
                              "estimable (each is listed with its reason)" +
                                  std::string(m.kind == DesignKind::split_plot ? ""
                                                                                : "; analysing without the interaction "
                                                                                  "estimates them from the main effects")
                            : ". Means average over the " + m.terms[t].label +
                                  " cells that were measured (each main plot of the same weight)"));
    g->empty_cells.push_back({t, std::move(empty)});
  }
  auto model = LinearModel::build(g->coded, options.method);
  if (!model) { g->problem = model.problem(); return; }
  g->model = std::move(model).value();
}

// ------------------------------------------------------------------ [table]

struct ErrorStratum {
  std::string label;
  std::optional<double> ms;
  double df = 0;
};

ErrorStratum error_of(const Analysis& a, const DesignModel& m, int term) {
  const int e = m.terms[term].error_term;
  const AnovaRow& row = e < 0 ? a.table[m.terms.size()] : a.table[e];
  return {e < 0 ? "residual" : m.terms[e].label, row.ms, row.df};
}

void fill_table(const DesignModel& m, const ResponseFit& fit, SumsKind sums, Analysis* a) {
  for (size_t t = 0; t < m.terms.size(); ++t) {
    AnovaRow row;
    row.source = m.terms[t].label;
    row.role = m.terms[t].role;
    row.df = sums == SumsKind::sequential ? fit.terms[t].df_sequential : fit.terms[t].df_partial;
    row.ss = sums == SumsKind::sequential ? fit.terms[t].ss_sequential : fit.terms[t].ss_partial;
    if (row.df > 0) row.ms = row.ss / row.df;
    a->table.push_back(row);
  }
  AnovaRow residual;
  residual.source = "residual";
  residual.role = TermRole::error;
  residual.df = fit.residual_df;
  residual.ss = fit.residual_ss;
  residual.ms = fit.residual_ss / fit.residual_df;
  a->table.push_back(residual);
  AnovaRow total;
  total.source = "total";
  total.role = TermRole::error;
  total.df = a->n - 1;
  total.ss = fit.total_ss;
  a->table.push_back(total);
  for (size_t t = 0; t < m.terms.size(); ++t) {
    AnovaRow& row = a->table[t];
    if (m.terms[t].role == TermRole::error || !row.ms) continue;
    const ErrorStratum err = error_of(*a, m, static_cast<int>(t));
    if (!err.ms || err.df <= 0) {
      a->notes.push_back("'" + row.source + "' is not tested: its error term '" + err.label +
                         "' has no degrees of freedom");
      continue;
    }
    row.error_term = err.label;
    if (*err.ms <= 0) {
      a->notes.push_back("'" + row.source + "' is not tested: the mean square of '" + err.label + "' is zero");
      continue;
    }
    row.f = *row.ms / *err.ms;
    row.p = f_upper_tail(*row.f, row.df, err.df);
  }
  for (AnovaRow& row : a->table) row.share_of_total = fit.total_ss > 0 ? row.ss / fit.total_ss : 0.0;
}

// ------------------------------------------------------------------ [means]

struct QuantileCache {
  std::map<std::pair<int, double>, double> q;
  double get(double p, int k, double df) {
    const auto key = std::make_pair(k, df);
    auto it = q.find(key);
    if (it != q.end()) return it->second;
    const double v = studentized_range_quantile(p, k, df);
    q.emplace(key, v);
    return v;
  }
};

struct SplitPlotCells {
  double ea = 0, eb = 0, df_a = 0, df_b = 0, b = 0;
  int main_position = 0;   // which of the term's two factors is the main plot
  // Weighted critical value for pairs that differ in the main plot.
  double mixed(double crit_a, double crit_b) const {
    return ((b - 1) * eb * crit_b + ea * crit_a) / ((b - 1) * eb + ea);
  }
};

TermMeans term_means(const DesignModel& m, const Group& g, const CellMeans& cm, const Analysis& a, double offset,
                     const AnalysisOptions& options, QuantileCache* cache) {
  TermMeans tm;
  const ModelTerm& term = m.terms[cm.term];
  tm.term = term.label;
  for (int f : term.factors) tm.factors.push_back(m.factor_columns[f]);
  const ErrorStratum err = error_of(a, m, cm.term);
  tm.error_term = err.label;
  tm.error_ms = err.ms.value_or(0.0);
  tm.error_df = err.df;
  // Split-plot main x sub cell means mix both strata: a cell mean has variance
  // ((b - 1) Eb + Ea) / (r b), two sub-plot levels under one main-plot level
  // differ with the sub-plot error alone, other pairs with the mixture and a
  // weighted critical value (Cochran & Cox 1957, ch. 7; Gomez & Gomez 1984,
  // ch. 3: formulas recalled from memory, exact for balanced data).
  std::optional<SplitPlotCells> split;
  if (m.kind == DesignKind::split_plot && term.factors.size() == 2) {
    const AnovaRow& ea = a.table[2];
    const AnovaRow& eb = a.table[m.terms.size()];
    if (ea.ms && eb.ms && ea.df > 0 && eb.df > 0) {
      split = SplitPlotCells{};
      split->ea = *ea.ms;
      split->eb = *eb.ms;
      split->df_a = ea.df;
      split->df_b = eb.df;
      split->b = g.coded.factors[m.treatment_factors[1]].levels;
      split->main_position = term.factors[0] == m.treatment_factors[0] ? 0 : 1;
      tm.error_term = "residual and " + m.terms[2].label;
      tm.error_ms = ((split->b - 1) * split->eb + split->ea) / split->b;
      tm.error_df = split->df_b;
      tm.note = "cell means carry both errors: pairs under one main-plot level use the residual, other pairs "
                "((b - 1) Eb + Ea) / b with a weighted critical value";
    }
  }
  const int k = static_cast<int>(cm.n.size());
  std::vector<int> usable;
  for (int c = 0; c < k; ++c) {
    MeanRow row;
    for (size_t j = 0; j < term.factors.size(); ++j) row.levels.push_back(g.level_names[term.factors[j]][cm.cell_levels[c][j]]);
    row.label = join(row.levels, " x ");
    row.n = cm.n[c];
    row.raw_mean = cm.raw_mean[c] + offset;
    row.estimable = cm.estimable[c] != 0;
    if (row.estimable) {
      row.mean = cm.mean[c] + offset;
      row.se = std::sqrt(cm.var_factor[c] * tm.error_ms);
      usable.push_back(c);
      if (std::abs(row.mean - row.raw_mean) > 1e-9 * std::max(1.0, std::abs(row.raw_mean))) tm.adjusted = true;
    }
    tm.levels.push_back(std::move(row));
  }
  if (usable.size() < static_cast<size_t>(k)) {
    // Why each mean is missing: the empty cells it would average over.
    std::vector<std::string> why;
    for (int c = 0; c < k && why.size() < 6; ++c) {
      if (cm.estimable[c]) continue;
      std::string reason;
      for (const auto& [t, empty] : g.empty_cells) {
        const std::vector<int>& tf = m.terms[t].factors;
        if (!std::includes(tf.begin(), tf.end(), term.factors.begin(), term.factors.end())) continue;
        for (const std::vector<int>& cell : empty) {
          bool agrees = true;
          for (size_t j = 0; j < term.factors.size(); ++j) {
            const size_t at = static_cast<size_t>(std::find(tf.begin(), tf.end(), term.factors[j]) - tf.begin());
            agrees = agrees && cell[at] == cm.cell_levels[c][j];
          }
          if (agrees) {
            reason = "no plot in " + cell_label(m, tf, g.level_names, cell);
            break;
          }
        }
        if (!reason.empty()) break;
      }
      if (reason.empty() && !g.empty_cells.empty()) {
        // Averaged over a stratum with holes: name them (the first three).
        std::vector<std::string> holes;
        for (const auto& [t, empty] : g.empty_cells)
          for (const std::vector<int>& cell : empty)
            if (holes.size() < 3) holes.push_back(cell_label(m, m.terms[t].factors, g.level_names, cell));
        reason = "it averages over cells with no plot: " + join(holes, ", ");
      }
      why.push_back(tm.levels[c].label + " (" + (reason.empty() ? "its plots are missing" : reason) + ")");
    }
    const size_t missing = static_cast<size_t>(k) - usable.size();
    std::string list = join(why, "; ");
    if (missing > why.size()) list += "; ...";
    tm.note += std::string(tm.note.empty() ? "" : "; ") + std::to_string(missing) + " of " + std::to_string(k) +
               " means not estimable: " + list;
  }
  if (usable.size() < 2 || tm.error_df <= 0 || tm.error_ms <= 0) return tm;
  // Mean variance of a difference over all pairs, in O(k).
  const double ku = static_cast<double>(usable.size());
  double sum_v = 0, sum_a2 = 0;
  std::vector<double> sum_a(cm.a_width, 0.0);
  for (int c : usable) {
    sum_v += cm.v[c];
    for (int j = 0; j < cm.a_width; ++j) {
      const double x = cm.a[c * cm.a_width + j];
      sum_a2 += x * x;
      sum_a[j] += x;
    }
  }
  double norm_sum_a = 0;
  for (double x : sum_a) norm_sum_a += x * x;
  const double pairs = ku * (ku - 1) / 2;
  const double mean_var = ((ku - 1) * sum_v + ku * sum_a2 - norm_sum_a) / pairs;
  tm.sed = std::sqrt(std::max(0.0, mean_var) * tm.error_ms);
  tm.t_critical = t_quantile(1 - options.alpha / 2, tm.error_df);
  tm.lsd = tm.lsd_min = tm.lsd_max = tm.t_critical * tm.sed;
  if (!options.comparisons) return tm;
  tm.q_critical = cache->get(1 - options.alpha, static_cast<int>(usable.size()), tm.error_df);
  tm.hsd = tm.q_critical / std::sqrt(2.0) * tm.sed;
  const int limit = term.factors.size() > 1 ? kMaxCellsForInteractionPairs : kMaxLevelsForPairs;
  if (static_cast<int>(usable.size()) > limit) {
    tm.note += std::string(tm.note.empty() ? "" : "; ") + "pairwise comparisons and letters are listed for up to " + std::to_string(limit) +
              (term.factors.size() > 1 ? " cells of an interaction" : " levels") +
              "; the LSD and HSD shown are for an average pair";
    return tm;
  }
  tm.lsd_min = std::numeric_limits<double>::infinity();
  tm.lsd_max = 0;
  const int u = static_cast<int>(usable.size());
  double t_a = 0, t_b = 0, q_a = 0, q_b = 0;
  if (split) {
    t_a = t_quantile(1 - options.alpha / 2, split->df_a);
    t_b = t_quantile(1 - options.alpha / 2, split->df_b);
    q_a = cache->get(1 - options.alpha, u, split->df_a);
    q_b = cache->get(1 - options.alpha, u, split->df_b);
  }
  double sum_lsd = 0, sum_hsd = 0;
  std::vector<std::vector<char>> lsd_differs(u, std::vector<char>(u, 0)), hsd_differs = lsd_differs;
  for (int i = 0; i < u; ++i) {
    for (int j = i + 1; j < u; ++j) {
      PairComparison pc;
      pc.first = usable[i];
      pc.second = usable[j];
      pc.difference = tm.levels[pc.first].mean - tm.levels[pc.second].mean;
      const double dvf = cm.difference_var_factor(pc.first, pc.second);
      if (split) {
        const int mp = split->main_position;
        const bool same_main = cm.cell_levels[pc.first][mp] == cm.cell_levels[pc.second][mp];
        pc.se = std::sqrt(dvf * (same_main ? split->eb : tm.error_ms));
        pc.lsd = (same_main ? t_b : split->mixed(t_a, t_b)) * pc.se;
        pc.hsd = (same_main ? q_b : split->mixed(q_a, q_b)) / std::sqrt(2.0) * pc.se;
      } else {
        pc.se = std::sqrt(dvf * tm.error_ms);
        pc.lsd = tm.t_critical * pc.se;
        pc.hsd = tm.q_critical / std::sqrt(2.0) * pc.se;
      }
      sum_lsd += pc.lsd;
      sum_hsd += pc.hsd;
      tm.lsd_min = std::min(tm.lsd_min, pc.lsd);
      tm.lsd_max = std::max(tm.lsd_max, pc.lsd);
      lsd_differs[i][j] = std::abs(pc.difference) > pc.lsd;
      hsd_differs[i][j] = std::abs(pc.difference) > pc.hsd;
      tm.pairs.push_back(pc);
    }
  }
  if (split && !tm.pairs.empty()) {
    // Summaries for an average pair of cells.
    tm.lsd = sum_lsd / static_cast<double>(tm.pairs.size());
    tm.hsd = sum_hsd / static_cast<double>(tm.pairs.size());
  }
  std::vector<double> means;
  for (int c : usable) means.push_back(tm.levels[c].mean);
  const auto by_lsd = letter_groups(means, [&](int i, int j) { return lsd_differs[i][j] != 0; });
  const auto by_hsd = letter_groups(means, [&](int i, int j) { return hsd_differs[i][j] != 0; });
  for (int i = 0; i < u; ++i) {
    tm.levels[usable[i]].group_lsd = by_lsd[i];
    tm.levels[usable[i]].group_hsd = by_hsd[i];
  }
  return tm;
}

// ------------------------------------------------------------- [components]

std::optional<double> row_ms(const Analysis& a, const std::string& source) {
  for (const AnovaRow& r : a.table)
    if (r.source == source) return r.ms;
  return std::nullopt;
}

double clamp_component(double v, const std::string& name, VarianceComponents* vc) {
  if (v >= 0) return v;
  vc->notes.push_back("the estimate of " + name + " was negative (" + std::to_string(v) +
                      ") and is reported as zero, the usual convention");
  return 0.0;
}

void fill_components(const DesignModel& m, const Group& g, Analysis* a) {
  VarianceComponents& vc = a->variance_components;
  vc.treatments_random = m.treatments_random;
  const double mse = *a->table[m.terms.size()].ms;
  vc.error = mse;
  for (const AnovaRow& r : a->table)
    if (r.source != "total") vc.shares.push_back({r.source, r.share_of_total});
  if (m.kind == DesignKind::split_plot) {
    const ModelTerm& main_error = m.terms[2];
    const auto ea = row_ms(*a, main_error.label);
    const double b = g.coded.factors[m.treatment_factors[1]].levels;
    if (ea) vc.main_plot_error = clamp_component((*ea - mse) / b, "the main-plot error variance", &vc);
  }
  if (!m.treatments_random) {
    vc.notes.push_back("treatments are read as fixed: no treatment variance or heritability");
    return;
  }
  if (m.kind == DesignKind::factorial || m.kind == DesignKind::split_plot) {
    vc.notes.push_back("treatment variance and heritability are given for single-treatment designs only");
    return;
  }
  const int tf = m.treatment_factors.front();
  const std::string& tlabel = m.factor_columns[tf];
  const auto ms_t = row_ms(*a, tlabel);
  if (!ms_t) return;
  // Effective replicates per entry: n0 = (N - sum n_i^2 / N) / (t - 1)
  // (one-way expected mean squares; equals r when balanced).
  std::vector<double> count(g.coded.factors[tf].levels, 0.0);
  for (int c : g.coded.factors[tf].codes) count[c] += 1;
  const double big_n = a->n, t = static_cast<double>(count.size());
  double sum_sq = 0;
  for (double c : count) sum_sq += c * c;
  const double n0 = (big_n - sum_sq / big_n) / (t - 1);
  if (m.kind == DesignKind::multi_site) {
    const double s = g.coded.factors[m.site_factor].levels;
    const double r = n0 / s;   // blocks per site
    const auto ms_ge = row_ms(*a, m.terms[3].label);
    if (!ms_ge) return;
    vc.sites = s;
    vc.replicates = r;
    const double ge = clamp_component((*ms_ge - mse) / r, "the treatment x site variance", &vc);
    const double gv = clamp_component((*ms_t - *ms_ge) / (r * s), "the treatment variance", &vc);
    vc.treatment_by_site = ge;
    vc.treatment = gv;
    const double denom = gv + ge / s + mse / (r * s);
    if (denom > 0) vc.heritability = gv / denom;
    vc.notes.push_back("several sites: sigma2_ge = (MS ge - MS e) / r, sigma2_g = (MS g - MS ge) / (r s), "
                       "H2 = sigma2_g / (sigma2_g + sigma2_ge / s + sigma2_e / (r s)) (Holland, Nyquist & "
                       "Cervantes-Martinez 2003), sites taken as a random sample");
  } else {
    vc.replicates = n0;
    vc.sites = 1;
    const double gv = clamp_component((*ms_t - mse) / n0, "the treatment variance", &vc);
    vc.treatment = gv;
    const double denom = gv + mse / n0;
    if (denom > 0) vc.heritability = gv / denom;
  }
  if (g.model->method() != FitMethod::balanced)
    vc.notes.push_back("unequal replication: replicates per entry taken as n0 = (N - sum n_i^2 / N) / (t - 1)");
}

// -------------------------------------------------------------- [residuals]

void find_outliers(const Group& g, const ResponseFit& fit, const std::vector<double>& y, double offset,
                   const AnalysisOptions& options, Analysis* a) {
  const double df = fit.residual_df;
  struct Candidate { int i; double t_ext, t_int, p; };
  std::vector<Candidate> c;
  a->fits.reserve(g.coded.n);
  for (int i = 0; i < g.coded.n; ++i) {
    PlotFit pf{g.records[i], y[i] + offset, fit.fitted[i] + offset, fit.residuals[i], 0.0};
    const double one_minus_h = 1.0 - fit.leverages[i];
    if (one_minus_h < 1e-10 || df <= 1) {   // a plot alone in its cell carries no residual
      a->fits.push_back(pf);
      continue;
    }
    const double e = fit.residuals[i];
    const double s2 = fit.residual_ss / df;
    const double s2_without = (fit.residual_ss - e * e / one_minus_h) / (df - 1);
    const double t_int = s2 > 0 ? e / std::sqrt(s2 * one_minus_h) : 0.0;
    const double t_ext = s2_without > 0 ? e / std::sqrt(s2_without * one_minus_h) : 0.0;
    pf.studentized = t_int;
    a->fits.push_back(pf);
    c.push_back({i, t_ext, t_int, 1.0});
  }
  std::vector<char> flagged(c.size(), 0);
  std::vector<double> p_adj(c.size(), 1.0);
  if (options.outlier_rule == OutlierRule::threshold) {
    for (size_t k = 0; k < c.size(); ++k) flagged[k] = std::abs(c[k].t_ext) > options.outlier_threshold;
    a->outlier_rule = "|externally studentized residual| > " + std::to_string(options.outlier_threshold).substr(0, 4);
  } else {
    // Holm (1979) step-down on two-sided P of t(df - 1).
    for (auto& x : c) x.p = t_two_sided_p(x.t_ext, df - 1);
    std::vector<size_t> order(c.size());
    std::iota(order.begin(), order.end(), 0);
    std::sort(order.begin(), order.end(), [&](size_t l, size_t r) { return c[l].p < c[r].p; });
    const double m = static_cast<double>(c.size());
    double running = 0;
    bool stop = false;
    for (size_t j = 0; j < order.size(); ++j) {
      running = std::max(running, std::min(1.0, (m - j) * c[order[j]].p));
      p_adj[order[j]] = running;
      if (!stop && c[order[j]].p <= options.alpha / (m - j)) flagged[order[j]] = 1;
      else stop = true;
    }
    a->outlier_rule = "Bonferroni-Holm on externally studentized residuals at alpha " + std::to_string(options.alpha).substr(0, 5);
  }
  for (size_t k = 0; k < c.size(); ++k) {
    if (!flagged[k]) continue;
    const int i = c[k].i;
    OutlierPlot o;
    o.record = g.records[i];
    o.value = y[i] + offset;
    o.fitted = fit.fitted[i] + offset;
    o.residual = fit.residuals[i];
    o.expected = o.value - fit.residuals[i] / (1.0 - fit.leverages[i]);
    o.studentized = c[k].t_int;
    o.studentized_external = c[k].t_ext;
    if (options.outlier_rule == OutlierRule::bonferroni_holm) o.p_holm = p_adj[k];
    a->outliers.push_back(o);
  }
  std::sort(a->outliers.begin(), a->outliers.end(), [](const OutlierPlot& l, const OutlierPlot& r) {
    return std::abs(l.studentized_external) > std::abs(r.studentized_external);
  });
}

// ---------------------------------------------------------------- [missing]

void find_missing_cells(const PlotTable& table, const DesignModel& m, const std::vector<char>& present,
                        std::vector<MissingCell>* out) {
  std::vector<std::vector<int>> groups = m.grid_groups;
  if (m.kind == DesignKind::latin_square) groups.pop_back();   // positions only: row x column
  std::vector<const DataColumn*> factor_col;
  for (const std::string& name : m.factor_columns) factor_col.push_back(table.find(name));
  const int records = table.records();
  // Per group, a compact id for each record's combination, in order of appearance.
  std::vector<std::vector<int>> combo_of(groups.size(), std::vector<int>(records));
  std::vector<std::vector<int>> first_record(groups.size());
  for (size_t gi = 0; gi < groups.size(); ++gi) {
    std::unordered_map<std::string, int> id;
    for (int r = 0; r < records; ++r) {
      std::string key;
      for (int f : groups[gi]) { key += trimmed(factor_col[f]->cells[r]); key += '\x1f'; }
      auto [it, inserted] = id.emplace(std::move(key), static_cast<int>(id.size()));
      if (inserted) first_record[gi].push_back(r);
      combo_of[gi][r] = it->second;
    }
  }
  // Records per full cell, keyed by mixed-radix combination ids.
  auto cell_key = [&](const std::vector<int>& ids) {
    long long key = 0;
    for (size_t gi = 0; gi < groups.size(); ++gi) key = key * static_cast<long long>(first_record[gi].size()) + ids[gi];
    return key;
  };
  std::unordered_map<long long, std::vector<int>> records_of;
  std::unordered_set<long long> has_value;
  std::vector<int> ids(groups.size());
  for (int r = 0; r < records; ++r) {
    for (size_t gi = 0; gi < groups.size(); ++gi) ids[gi] = combo_of[gi][r];
    const long long key = cell_key(ids);
    records_of[key].push_back(r);
    if (present[r]) has_value.insert(key);
  }
  std::vector<int> pick(groups.size(), 0);
  while (true) {
    const long long key = cell_key(pick);
    if (!has_value.count(key)) {
      std::vector<std::string> parts;
      for (size_t gi = 0; gi < groups.size(); ++gi) {
        const int r0 = first_record[gi][pick[gi]];
        for (int f : groups[gi]) parts.push_back(m.factor_columns[f] + " " + trimmed(factor_col[f]->cells[r0]));
      }
      MissingCell mc;
      mc.label = join(parts, " x ");
      auto it = records_of.find(key);
      if (it != records_of.end()) mc.records = it->second;
      out->push_back(std::move(mc));
    }
    size_t gi = 0;
    while (gi < pick.size() && ++pick[gi] == static_cast<int>(first_record[gi].size())) { pick[gi] = 0; ++gi; }
    if (gi == pick.size()) break;
  }
}

}  // namespace

// ----------------------------------------------------------------- [driver]

namespace {
Result<Analysis> analyse_response(const PlotTable& table, const DesignModel& m, const Group& g,
                                  const ParsedResponse& parsed, const std::string& response,
                                  const AnalysisOptions& options, QuantileCache* cache);
}  // namespace

std::vector<Result<Analysis>> analyse_all(const PlotTable& table, const DesignRoles& roles,
                                          const std::vector<std::string>& responses, const AnalysisOptions& options) {
  std::vector<Result<Analysis>> out;
  DesignRoles asked = roles;
  asked.without_interaction = roles.without_interaction || options.without_interaction;
  auto model = build_design_model(asked);
  auto fail_all = [&](const Problem& p) {
    out.clear();
    for (size_t i = 0; i < responses.size(); ++i) out.emplace_back(p);
    return out;
  };
  if (!model) return fail_all(model.problem());
  const DesignModel& m = *model;
  for (const std::string& name : m.factor_columns)
    if (!table.find(name)) return fail_all(make_problem("there is no column named '" + name + "'", name));
  if (!(options.alpha > 0 && options.alpha < 1)) return fail_all(make_problem("alpha must lie between 0 and 1"));

  std::vector<std::optional<ParsedResponse>> parsed(responses.size());
  std::vector<std::optional<Problem>> problems(responses.size());
  std::map<std::vector<char>, Group> groups;
  for (size_t k = 0; k < responses.size(); ++k) {
    const DataColumn* col = table.find(responses[k]);
    if (!col) { problems[k] = make_problem("there is no column named '" + responses[k] + "'", responses[k]); continue; }
    if (std::find(m.factor_columns.begin(), m.factor_columns.end(), responses[k]) != m.factor_columns.end()) {
      problems[k] = make_problem("column '" + responses[k] + "' is a design column, not a response", responses[k]);
      continue;
    }
    auto p = parse_response(*col);
    if (!p) { problems[k] = p.problem(); continue; }
    parsed[k] = std::move(p).value();
    Group& g = groups[parsed[k]->present];
    if (g.records.empty())
      for (int r = 0; r < table.records(); ++r) if (parsed[k]->present[r]) g.records.push_back(r);
  }
  // One pattern of missing plots at a time: its model is built, used for
  // every response with that pattern, and released before the next (the
  // models of a large trial are tens of MB each).
  QuantileCache cache;
  std::vector<std::optional<Result<Analysis>>> done(responses.size());
  for (size_t k = 0; k < responses.size(); ++k)
    if (problems[k]) done[k].emplace(*problems[k]);
  for (auto& [mask, g] : groups) {
    prepare_group(table, m, options, &g);
    if (!g.problem) find_missing_cells(table, m, mask, &g.missing_cells);
    for (size_t k = 0; k < responses.size(); ++k) {
      if (problems[k] || parsed[k]->present != mask) continue;
      done[k].emplace(analyse_response(table, m, g, *parsed[k], responses[k], options, &cache));
    }
    g.model.reset();
  }
  for (auto& d : done) out.push_back(std::move(*d));
  return out;
}

namespace {

Result<Analysis> analyse_response(const PlotTable& table, const DesignModel& m, const Group& g,
                                  const ParsedResponse& parsed, const std::string& response,
                                  const AnalysisOptions& options, QuantileCache* cache_ptr) {
  QuantileCache& cache = *cache_ptr;
  {
    if (g.problem) return *g.problem;
    auto centred = centre_decimals(parsed.values);
    if (!centred) {
      Problem p = centred.problem();
      p.column = response;
      if (p.record >= 0) p.record = g.records[p.record];
      return p;
    }
    const std::vector<double>& y = centred->centred;
    const double offset = centred->offset;
    const ResponseFit fit = g.model->fit(y);
    Analysis a;
    a.design = m.kind;
    a.response = response;
    a.n = g.coded.n;
    a.n_missing = table.records() - a.n;
    a.sums = options.sums;
    a.method = g.model->method();
    a.alpha = options.alpha;
    a.offset_text = centred->offset_text;
    fill_table(m, fit, options.sums, &a);
    a.grand_mean = offset + fit.mean;
    a.residual_df = fit.residual_df;
    const double mse = fit.residual_ss / fit.residual_df;
    a.residual_sd = std::sqrt(mse);
    a.r_squared = fit.total_ss > 0 ? 1.0 - fit.residual_ss / fit.total_ss : 0.0;
    a.cv_percent = a.grand_mean != 0 ? 100.0 * a.residual_sd / std::abs(a.grand_mean) : 0.0;
    if (a.grand_mean == 0) a.notes.push_back("the grand mean is zero: CV and detectable difference in % are not defined");
    for (const CellMeans& cm : fit.means) a.means.push_back(term_means(m, g, cm, a, offset, options, &cache));
    if (!a.means.empty() && a.means.front().sed > 0) {
      const TermMeans& first = a.means.front();
      a.lsd = first.lsd;
      if (first.q_critical > 0) a.hsd = first.hsd;
      if (a.grand_mean != 0) {
        // Exact: the noncentral t power (the usual t(1 - alpha/2) + t(power)
        // is too small at few error DF, as split-plot main plots have).
        double in_se = detectable_difference_in_se(first.error_df, options.alpha, kDetectionPower);
        if (!std::isfinite(in_se)) in_se = first.t_critical + t_quantile(kDetectionPower, first.error_df);
        const double mdd = in_se * first.sed;
        a.mdd_percent = 100.0 * mdd / std::abs(a.grand_mean);
      }
    }
    fill_components(m, g, &a);
    find_outliers(g, fit, y, offset, options, &a);
    a.missing_cells = g.missing_cells;
    for (const std::string& note : g.notes) a.notes.push_back(note);
    if (m.without_interaction)
      a.notes.push_back(std::string("analysed without the treatment interaction, as asked: main effects only; ") +
                        (m.kind == DesignKind::multi_site
                             ? "the residual holds the site x entry variation, and entries are tested against it"
                             : "the residual holds the interaction, if there is one"));
    a.notes.push_back(std::string("sums of squares: ") +
                      (options.sums == SumsKind::partial
                           ? "partial (each term adjusted for every other term that does not contain it)"
                           : "sequential (each term adjusted for the terms above it)"));
    if (a.method != FitMethod::balanced && (m.kind == DesignKind::split_plot || (m.kind == DesignKind::multi_site && m.sites_random)))
      a.notes.push_back("unbalanced data: F tests against a stratum mean square are approximate");
    return a;
  }
}

}  // namespace

Result<Analysis> analyse(const PlotTable& table, const DesignRoles& roles, const std::string& response,
                         const AnalysisOptions& options) {
  return std::move(analyse_all(table, roles, {response}, options).front());
}

}  // namespace furrow
