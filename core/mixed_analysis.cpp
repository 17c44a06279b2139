#include "core/mixed_analysis.h"

#include <algorithm>
#include <atomic>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <map>
#include <optional>
#include <set>
#include <thread>
#include <unordered_map>

#include "core/distributions.h"
#include "core/exact_decimal.h"
#include "core/letter_groups.h"
#include "core/reml.h"
#include "core/studentized_range.h"
#include "core/text.h"

namespace furrow {
namespace {

std::optional<int> whole_number(const std::string& text) {
  const std::string t = trimmed(text);
  if (t.empty() || t.size() > 9) return std::nullopt;
  size_t i = t[0] == '-' ? 1 : 0;
  if (i == t.size()) return std::nullopt;
  for (size_t k = i; k < t.size(); ++k)
    if (!std::isdigit(static_cast<unsigned char>(t[k]))) return std::nullopt;
  return std::stoi(t);
}

struct Coded {
  std::vector<int> records;                          // analysed input records
  std::vector<double> y;
  std::vector<CodedFactor> factors;                  // per model factor
  std::vector<std::vector<std::string>> names;       // per factor, per code
};

// How each model term enters the mixed model.
enum class Part { fixed, random };

Part part_of(const DesignModel& m, const ModelTerm& t) {
  auto has = [&](int f) { return std::find(t.factors.begin(), t.factors.end(), f) != t.factors.end(); };
  bool treatment = false;
  for (int f : m.treatment_factors) treatment = treatment || has(f);
  switch (t.role) {
    case TermRole::error: return Part::random;
    case TermRole::blocking:
      if (t.factors.size() == 1 && t.factors[0] == m.site_factor) return m.sites_random ? Part::random : Part::fixed;
      return Part::random;
    case TermRole::treatment:
      if (treatment && m.treatments_random) return Part::random;
      if (m.site_factor >= 0 && has(m.site_factor)) return Part::random;   // entry x site
      return Part::fixed;
  }
  return Part::fixed;
}

struct FitSet {
  std::optional<MixedFit> fit;
  std::vector<int> fixed_terms, random_terms;        // model term index per spec term
};

Result<MixedFit> fit_model(const DesignModel& m, const Coded& c, const std::vector<int>& fixed_terms,
                           const std::vector<int>& random_terms, const std::optional<SpatialField>& field,
                           const std::vector<std::pair<std::string, std::vector<double>>>& covariates,
                           const RemlOptions& ro) {
  MixedModelSpec spec;
  spec.n = static_cast<int>(c.y.size());
  spec.factors = c.factors;
  for (int t : fixed_terms) spec.fixed.push_back({m.terms[t].label, m.terms[t].factors});
  for (int t : random_terms) spec.random.push_back({m.terms[t].label, m.terms[t].factors});
  for (const auto& [label, values] : covariates) {
    spec.covariate_labels.push_back(label);
    spec.covariates.push_back(values);
  }
  spec.spatial = field;
  return fit_reml(spec, c.y, ro);
}

bool term_balanced(const CodedDesign& d, const std::vector<int>& factors) {
  const TermCells cells = term_cells(d, factors);
  long long expected = 1;
  for (int f : factors) expected *= d.factors[f].levels;
  if (static_cast<long long>(cells.count.size()) != expected) return false;
  for (int n : cells.count)
    if (n != cells.count.front()) return false;
  return true;
}

}  // namespace

Result<MixedAnalysis> analyse_reml(const PlotTable& table, const DesignRoles& roles, const std::string& response,
                                   const MixedAnalysisOptions& options) {
  auto built = build_design_model(roles);
  if (!built) return built.problem();
  const DesignModel& m = *built;
  const DataColumn* ycol = table.find(response);
  if (!ycol) return make_problem("no column named '" + response + "'", response);
  for (const std::string& name : m.factor_columns)
    if (!table.find(name)) return make_problem("no column named '" + name + "'", name);

  MixedAnalysis out;
  out.design = m.kind;
  out.response = response;
  out.alpha = options.alpha;

  // ---- the plots with a value, coded
  Coded c;
  std::vector<ExactDecimal> decimals;
  for (int r = 0; r < table.records(); ++r) {
    if (is_missing_text(ycol->cells[r])) { ++out.n_missing; continue; }
    auto v = parse_exact_decimal(ycol->cells[r]);
    if (!v) return make_problem(v.problem().message + " (expected a number)", response, r);
    c.records.push_back(r);
    decimals.push_back(*v);
  }
  if (!decimals.empty()) {
    // Exact centring first (exact_decimal.h), so that values far from zero keep their digits.
    auto centred = centre_decimals(decimals);
    if (!centred) return make_problem(centred.problem().message, response);
    for (double d : centred->centred) c.y.push_back(centred->offset + d);
  }
  if (c.y.size() < 3) return make_problem("column '" + response + "' has fewer than three values", response);
  out.n = static_cast<int>(c.y.size());
  const int nf = static_cast<int>(m.factor_columns.size());
  c.names.assign(nf, {});
  for (int f = 0; f < nf; ++f) {
    const DataColumn* col = table.find(m.factor_columns[f]);
    std::unordered_map<std::string, int> code_of;
    CodedFactor cf;
    for (int r : c.records) {
      const std::string v = trimmed(col->cells[r]);
      if (v.empty()) return make_problem("empty '" + col->name + "' for a plot that has a value", col->name, r);
      auto [it, inserted] = code_of.emplace(v, static_cast<int>(code_of.size()));
      if (inserted) c.names[f].push_back(v);
      cf.codes.push_back(it->second);
    }
    cf.levels = static_cast<int>(code_of.size());
    // Levels of the plan with no plot that has a value drop out of the model; say so.
    std::vector<std::string> absent;
    std::unordered_map<std::string, int> absent_seen;
    for (int r = 0, next = 0; r < table.records(); ++r) {
      if (next < static_cast<int>(c.records.size()) && c.records[next] == r) {   // a plot with a value: coded above
        ++next;
        continue;
      }
      const std::string v = trimmed(col->cells[r]);
      if (!v.empty() && !code_of.count(v) && absent_seen.emplace(v, 0).second) absent.push_back(v);
    }
    if (!absent.empty())
      out.notes.push_back("'" + col->name + "' " + (absent.size() == 1 ? "level " : "levels ") + "'" +
                          join(absent, "', '") + "' " + (absent.size() == 1 ? "has" : "have") +
                          " no plot with a value and " + (absent.size() == 1 ? "is" : "are") + " left out");
    const bool nested_block = f == m.block_factor && m.site_factor >= 0;
    if (cf.levels < 2 && !nested_block)
      return make_problem("column '" + col->name + "' has only one level ('" + c.names[f][0] +
                              "') among the plots with a value; the design needs at least two",
                          col->name, c.records.front());
    c.factors.push_back(std::move(cf));
  }
  double sum = 0;
  for (double v : c.y) sum += v;
  out.grand_mean = sum / c.y.size();

  // ---- the model
  std::vector<int> fixed_terms, random_terms;
  std::vector<std::string> words;
  for (int t = 0; t < static_cast<int>(m.terms.size()); ++t) {
    if (part_of(m, m.terms[t]) == Part::fixed) fixed_terms.push_back(t);
    else random_terms.push_back(t);
  }
  {
    std::vector<std::string> f, r;
    for (int t : fixed_terms) f.push_back(m.terms[t].label);
    for (int t : random_terms) r.push_back(m.terms[t].label);
    out.model = "fixed: " + (f.empty() ? std::string("overall mean") : join(f, ", ")) +
                "; random: " + (r.empty() ? std::string("none") : join(r, ", ")) + "; plot error";
  }
  CodedDesign coded;
  coded.n = out.n;
  coded.factors = c.factors;
  bool balanced = out.n_missing == 0;
  for (const ModelTerm& t : m.terms) balanced = balanced && term_balanced(coded, t.factors);

  // ---- positions and field trend
  std::optional<SpatialField> field;
  std::vector<std::pair<std::string, std::vector<double>>> covariates;
  FieldTrendFit trend;
  std::vector<int> row_of(table.records(), INT32_MIN), col_of(table.records(), INT32_MIN);
  const bool want_positions = options.trend != FieldTrendChoice::off || options.linear_row || options.linear_col;
  if (want_positions) {
    const DataColumn* rc = table.find(options.row_column);
    const DataColumn* cc = table.find(options.col_column);
    if (!rc) return make_problem("field trend needs the plots' row: no column named '" + options.row_column + "'", options.row_column);
    if (!cc) return make_problem("field trend needs the plots' column: no column named '" + options.col_column + "'", options.col_column);
    if (m.site_factor >= 0 && c.factors[m.site_factor].levels > 1)
      return make_problem("field trend is fitted one site at a time; analyse each site's plots on their own", m.factor_columns[m.site_factor]);
    int rmin = INT32_MAX, rmax = INT32_MIN, cmin = INT32_MAX, cmax = INT32_MIN;
    for (int r = 0; r < table.records(); ++r) {
      const auto rv = whole_number(rc->cells[r]);
      const auto cv = whole_number(cc->cells[r]);
      const bool analysed = std::binary_search(c.records.begin(), c.records.end(), r);
      if (!rv || !cv) {
        if (analysed)
          return make_problem("a plot's position must be a whole number", !rv ? rc->name : cc->name, r);
        continue;
      }
      row_of[r] = *rv;
      col_of[r] = *cv;
      rmin = std::min(rmin, *rv); rmax = std::max(rmax, *rv);
      cmin = std::min(cmin, *cv); cmax = std::max(cmax, *cv);
    }
    const long long rows = static_cast<long long>(rmax) - rmin + 1, cols = static_cast<long long>(cmax) - cmin + 1;
    if (rows < 2 || cols < 2) return make_problem("field trend needs plots in at least two rows and two columns", rc->name);
    if (rows * cols > 10000)
      return make_problem("the field spans " + std::to_string(rows) + " rows x " + std::to_string(cols) +
                              " columns; field trend is fitted for at most 10,000 positions (a minute's work)",
                          rc->name);
    if (rows * cols > 4LL * static_cast<long long>(c.records.size()))
      return make_problem("the plots with a value fill " + std::to_string(c.records.size()) + " of the field's " +
                              std::to_string(rows * cols) +
                              " positions; field trend needs plots over most of the rectangle they span",
                          rc->name);
    trend.rows = static_cast<int>(rows);
    trend.cols = static_cast<int>(cols);
    trend.first_row = rmin;
    trend.first_col = cmin;
    SpatialField f;
    f.label = "field trend";
    f.rows = trend.rows;
    f.cols = trend.cols;
    std::set<std::pair<int, int>> seen;
    for (int r : c.records) {
      if (!seen.insert({row_of[r], col_of[r]}).second)
        return make_problem("two plots with a value share row " + std::to_string(row_of[r]) + " and column " +
                                std::to_string(col_of[r]),
                            rc->name, r);
      f.row.push_back(row_of[r] - rmin);
      f.col.push_back(col_of[r] - cmin);
    }
    if (options.linear_row || options.linear_col) {
      auto centred = [&](const std::vector<int>& pos) {
        std::vector<double> v;
        double s = 0;
        for (int r : c.records) s += pos[r];
        s /= c.records.size();
        for (int r : c.records) v.push_back(pos[r] - s);
        return v;
      };
      if (options.linear_row) covariates.push_back({"straight-line trend down the rows", centred(row_of)});
      if (options.linear_col) covariates.push_back({"straight-line trend across the columns", centred(col_of)});
    }
    if (options.trend != FieldTrendChoice::off) field = f;
  }

  // ---- fits
  auto independent = fit_model(m, c, fixed_terms, random_terms, std::nullopt, covariates, {});
  if (!independent) return make_problem(independent.problem().message);
  std::optional<MixedFit> chosen = *independent;
  if (field) {
    // The field's likelihood can have more than one peak (one often at an
    // autocorrelation's limit): fits from four starting points, the highest kept.
    const auto& ip = independent->parameters();
    // The starts are independent fits; they run on up to as many threads as
    // the machine has cores, and the highest is taken in start order, so the
    // answer does not depend on which finishes first.
    constexpr int kStarts = 4;
    const double starts[kStarts][2] = {{0.3, 0.3}, {-0.3, -0.3}, {0.6, -0.2}, {-0.2, 0.6}};
    std::vector<std::optional<Result<MixedFit>>> fits(kStarts);
    std::atomic<int> next{0};
    auto work = [&] {
      for (int i = next++; i < kStarts; i = next++) {
        RemlOptions ro;
        for (size_t k = 0; k + 1 < ip.size(); ++k) ro.start.push_back(std::max(ip[k].value, 1e-3 * ip.back().value));
        ro.start.push_back(ip.back().value * 0.5);
        ro.start.push_back(starts[i][0]);
        ro.start.push_back(starts[i][1]);
        ro.start.push_back(ip.back().value * 0.5);
        fits[i] = fit_model(m, c, fixed_terms, random_terms, field, covariates, ro);
      }
    };
    // With FURROW_REML_TRACE set they run one after another, so that the
    // trace's lines stay in order.
    const int threads = std::getenv("FURROW_REML_TRACE") != nullptr
                            ? 1
                            : std::clamp(static_cast<int>(std::thread::hardware_concurrency()), 1, kStarts);
    std::vector<std::thread> helpers;
    for (int t = 1; t < threads; ++t) helpers.emplace_back(work);
    work();
    for (std::thread& h : helpers) h.join();
    std::optional<MixedFit> best;
    std::string refused;
    for (auto& fit : fits) {
      if (!*fit) {
        refused = fit->problem().message;
        break;
      }
      if (!best || (*fit)->log_likelihood() > best->log_likelihood()) best = **fit;
    }
    if (!refused.empty()) {
      // Asked to test for a trend the trial cannot support: the analysis
      // goes on without it, and says why.
      if (options.trend == FieldTrendChoice::always) return make_problem(refused);
      out.notes.push_back("field trend not tested: " + refused);
      field.reset();
    } else {
      const MixedFit* spatial = &*best;
      trend.loglik_independent = independent->log_likelihood();
      trend.loglik_trend = spatial->log_likelihood();
      trend.lr_statistic = std::max(0.0, 2.0 * (trend.loglik_trend - trend.loglik_independent));
      trend.p = trend.lr_statistic > 0 ? chi_square_upper_tail(trend.lr_statistic, 3.0) : 1.0;
      trend.chosen = options.trend == FieldTrendChoice::always || trend.p < options.trend_alpha;
      const auto& sp = spatial->parameters();
      const size_t base = random_terms.size();
      trend.variance = sp[base].value;
      trend.variance_se = sp[base].se;
      trend.rho_row = sp[base + 1].value;
      trend.rho_row_se = sp[base + 1].se;
      trend.rho_col = sp[base + 2].value;
      trend.rho_col_se = sp[base + 2].se;
      trend.trend = spatial->field();
      trend.record_trend.assign(table.records(), 0.0);
      for (int r = 0; r < table.records(); ++r)
        if (row_of[r] != INT32_MIN) {
          const int rr = row_of[r] - trend.first_row, cc = col_of[r] - trend.first_col;
          if (rr >= 0 && rr < trend.rows && cc >= 0 && cc < trend.cols) trend.record_trend[r] = trend.trend[cc * trend.rows + rr];
        }
      if (trend.chosen) chosen = *spatial;
    }
  }
  const MixedFit& fit = *chosen;
  out.loglik = fit.log_likelihood();
  out.iterations = fit.iterations();
  out.converged = fit.converged();
  if (!fit.converged()) out.notes.push_back("the REML fit stopped before its convergence test was met; treat the results with care");

  // ---- components
  const auto& params = fit.parameters();
  for (size_t k = 0; k < params.size(); ++k) {
    ComponentEstimate ce;
    ce.source = k < random_terms.size() ? m.terms[random_terms[k]].label : params[k].label;
    if (params[k].kind == ParameterKind::residual_variance) ce.source = "residual (plot error)";
    ce.variance = params[k].value;
    ce.se = params[k].se;
    ce.at_bound = params[k].at_bound;
    ce.correlation = params[k].kind == ParameterKind::autocorrelation;
    if (ce.at_bound && params[k].kind == ParameterKind::residual_variance)
      out.notes.push_back("the plot error is held at a floor of a millionth of the total variance: the field trend "
                          "carries nearly all the variation between plots");
    else if (ce.at_bound && ce.correlation && ce.variance > 0)
      out.notes.push_back("'" + ce.source + "' reached its limit of 0.995: the trend is smoother than the model's "
                          "correlation describes (a straight-line trend may describe it better)");
    else if (ce.at_bound && ce.correlation)
      out.notes.push_back("'" + ce.source + "' reached its limit of -0.995: neighbouring plots alternate high and low "
                          "more than the model's correlation describes (look for a pattern of the layout, such as "
                          "alternate rows sown or harvested differently)");
    else if (ce.at_bound)
      out.notes.push_back("the variance of '" + ce.source + "' is held at zero (its estimate would be negative)");
    out.components.push_back(ce);
  }
  for (size_t k = 0; k < covariates.size(); ++k) {
    std::vector<double> x(fit.fixed_columns(), 0.0);
    x[fit.fixed_columns() - covariates.size() + k] = 1.0;
    const bool rows = covariates[k].first.find("rows") != std::string::npos;
    out.straight_trend.push_back({rows ? "rows" : "columns", fit.estimate(x), std::sqrt(std::max(0.0, fit.variance(x)))});
  }
  if (field) out.trend = trend;
  if (out.trend && out.trend->chosen) out.model += "; field trend (AR1 x AR1)";
  for (const auto& cv : covariates) out.model += "; " + cv.first;

  // ---- predicted means on the grid of fixed factors
  std::vector<int> grid_factors;
  for (int t : fixed_terms)
    for (int f : m.terms[t].factors)
      if (std::find(grid_factors.begin(), grid_factors.end(), f) == grid_factors.end()) grid_factors.push_back(f);
  std::sort(grid_factors.begin(), grid_factors.end());
  std::vector<std::map<std::vector<int>, int>> cell_index(fixed_terms.size());
  for (size_t k = 0; k < fixed_terms.size(); ++k) {
    const TermCells& tc = fit.fixed_term_cells(static_cast<int>(k));
    for (size_t cell = 0; cell < tc.levels.size(); ++cell) cell_index[k][tc.levels[cell]] = static_cast<int>(cell);
  }
  long long grid_size = 1;
  for (int f : grid_factors) grid_size *= c.factors[f].levels;
  if (grid_size > 200000) return make_problem("too many combinations of fixed factors for predicted means");
  const int pcols = fit.fixed_columns();
  // x row of one grid cell (levels per grid factor); nullopt when a term's cell was never observed.
  auto grid_row = [&](const std::vector<int>& levels) -> std::optional<std::vector<double>> {
    std::vector<double> x(pcols, 0.0);
    x[0] = 1.0;
    for (size_t k = 0; k < fixed_terms.size(); ++k) {
      std::vector<int> key;
      for (int f : m.terms[fixed_terms[k]].factors)
        key.push_back(levels[std::find(grid_factors.begin(), grid_factors.end(), f) - grid_factors.begin()]);
      const auto it = cell_index[k].find(key);
      if (it == cell_index[k].end()) return std::nullopt;
      x[fit.fixed_term_first_column(static_cast<int>(k)) + it->second] = 1.0;
    }
    // Covariates are centred: means are predicted at their mean (0).
    return x;
  };
  // Average x over the grid cells whose levels of `factors` are `levels`.
  auto average_row = [&](const std::vector<int>& factors, const std::vector<int>& levels) -> std::optional<std::vector<double>> {
    std::vector<double> acc(pcols, 0.0);
    std::vector<int> g(grid_factors.size(), 0);
    for (size_t k = 0; k < factors.size(); ++k)
      g[std::find(grid_factors.begin(), grid_factors.end(), factors[k]) - grid_factors.begin()] = levels[k];
    std::vector<char> free(grid_factors.size(), 1);
    for (int f : factors) free[std::find(grid_factors.begin(), grid_factors.end(), f) - grid_factors.begin()] = 0;
    long long count = 0;
    while (true) {
      const auto x = grid_row(g);
      if (!x) return std::nullopt;
      for (int j = 0; j < pcols; ++j) acc[j] += (*x)[j];
      ++count;
      size_t k = 0;
      for (; k < g.size(); ++k) {
        if (!free[k]) continue;
        if (++g[k] < c.factors[grid_factors[k]].levels) break;
        g[k] = 0;
      }
      if (k == g.size()) break;
    }
    for (double& v : acc) v /= static_cast<double>(count);
    if (!fit.estimable(acc)) return std::nullopt;
    return acc;
  };

  bool first_treatment = true;
  for (size_t k = 0; k < fixed_terms.size(); ++k) {
    const ModelTerm& term = m.terms[fixed_terms[k]];
    // Every combination of the term's levels.
    std::vector<std::vector<int>> combos;
    std::vector<int> lv(term.factors.size(), 0);
    while (true) {
      combos.push_back(lv);
      size_t j = 0;
      while (j < lv.size() && ++lv[j] == c.factors[term.factors[j]].levels) { lv[j] = 0; ++j; }
      if (j == lv.size()) break;
    }
    std::vector<std::optional<std::vector<double>>> rows;
    for (const auto& combo : combos) rows.push_back(average_row(term.factors, combo));
    // Test: products of (level i - last level) contrasts over the term's factors.
    MixedTermTest test;
    test.source = term.label;
    bool all_estimable = true;
    for (const auto& r : rows) all_estimable = all_estimable && r.has_value();
    if (!all_estimable) {
      test.estimable = false;
    } else {
      std::vector<std::vector<double>> contrasts;
      std::vector<int> ci(term.factors.size(), 0);
      bool more = true;
      for (int f : term.factors) more = more && c.factors[f].levels > 1;
      while (more) {
        std::vector<double> row(pcols, 0.0);
        for (size_t a = 0; a < combos.size(); ++a) {
          double coef = 1.0;
          for (size_t j = 0; j < term.factors.size(); ++j) {
            const int last = c.factors[term.factors[j]].levels - 1;
            coef *= combos[a][j] == ci[j] ? 1.0 : combos[a][j] == last ? -1.0 : 0.0;
          }
          if (coef != 0)
            for (int j = 0; j < pcols; ++j) row[j] += coef * (*rows[a])[j];
        }
        contrasts.push_back(std::move(row));
        size_t j = 0;
        while (j < ci.size() && ++ci[j] == c.factors[term.factors[j]].levels - 1) { ci[j] = 0; ++j; }
        if (j == ci.size()) break;
      }
      const WaldTest w = fit.wald(contrasts);
      test.estimable = w.estimable;
      test.num_df = w.num_df;
      test.den_df = w.den_df;
      test.f = w.f;
      test.p = w.p;
    }
    out.tests.push_back(test);
    if (term.role != TermRole::treatment) continue;

    // Predicted means, SEs, SEDs, LSD/HSD and letters.
    TermMeans tm;
    tm.term = term.label;
    for (int f : term.factors) tm.factors.push_back(m.factor_columns[f]);
    tm.error_term = "REML, Satterthwaite DF";
    const TermCells raw = term_cells(coded, term.factors);
    std::map<std::vector<int>, std::pair<int, double>> raw_of;
    for (int i = 0; i < out.n; ++i) {
      auto& e = raw_of[raw.levels[raw.cell_of[i]]];
      ++e.first;
      e.second += c.y[i];
    }
    std::vector<int> est_index;
    std::vector<std::vector<double>> est_rows;
    for (size_t a = 0; a < combos.size(); ++a) {
      MeanRow row;
      for (size_t j = 0; j < term.factors.size(); ++j) row.levels.push_back(c.names[term.factors[j]][combos[a][j]]);
      row.label = join(row.levels, " x ");
      const auto it = raw_of.find(combos[a]);
      row.n = it == raw_of.end() ? 0 : it->second.first;
      row.raw_mean = row.n ? it->second.second / row.n : 0.0;
      row.estimable = rows[a].has_value();
      if (row.estimable) {
        row.mean = fit.estimate(*rows[a]);
        row.se = std::sqrt(std::max(0.0, fit.variance(*rows[a])));
        est_index.push_back(static_cast<int>(a));
        est_rows.push_back(*rows[a]);
      }
      if (std::abs(row.mean - row.raw_mean) > 1e-9 * (1 + std::abs(row.raw_mean))) tm.adjusted = true;
      tm.levels.push_back(std::move(row));
    }
    const int ke = static_cast<int>(est_rows.size());
    if (ke >= 2) {
      double avg_df = 0;
      const std::vector<double> cov = fit.covariance(est_rows);
      const bool pairs_wanted = options.comparisons &&
                                ke <= (term.factors.size() == 1 ? kMaxLevelsForPairs : kMaxCellsForInteractionPairs);
      const std::vector<double> dfs = fit.pairwise_df(est_rows, &avg_df);
      if (avg_df < 1.0) {
        tm.note = "fewer than one degree of freedom for comparing these means (" + std::to_string(avg_df) +
                  "); the LSD and HSD use one";
        avg_df = 1.0;
      }
      double vsum = 0, lmin = INFINITY, lmax = 0;
      int npairs = 0;
      const double q = studentized_range_quantile(1.0 - options.alpha, ke, avg_df);
      for (int i = 0; i < ke; ++i)
        for (int j = i + 1; j < ke; ++j) {
          const double var = cov[i * ke + i] + cov[j * ke + j] - 2 * cov[i * ke + j];
          vsum += var;
          ++npairs;
          const double sed = std::sqrt(std::max(0.0, var));
          const double lsd =
              t_quantile(1.0 - options.alpha / 2, std::max(1.0, dfs[static_cast<size_t>(i) * ke + j])) * sed;
          lmin = std::min(lmin, lsd);
          lmax = std::max(lmax, lsd);
          if (pairs_wanted) {
            PairComparison pc;
            pc.first = est_index[i];
            pc.second = est_index[j];
            pc.difference = tm.levels[pc.first].mean - tm.levels[pc.second].mean;
            pc.se = sed;
            pc.lsd = lsd;
            pc.hsd = q / std::sqrt(2.0) * sed;
            tm.pairs.push_back(pc);
          }
        }
      tm.error_df = avg_df;
      tm.sed = std::sqrt(vsum / npairs);
      tm.t_critical = t_quantile(1.0 - options.alpha / 2, avg_df);
      tm.q_critical = q;
      tm.lsd = tm.t_critical * tm.sed;
      tm.hsd = q / std::sqrt(2.0) * tm.sed;
      tm.lsd_min = lmin;
      tm.lsd_max = lmax;
      if (pairs_wanted) {
        std::vector<double> means;
        for (int i : est_index) means.push_back(tm.levels[i].mean);
        std::map<std::pair<int, int>, const PairComparison*> by;
        for (const auto& pc : tm.pairs) by[{pc.first, pc.second}] = &pc;
        auto lookup = [&](int a, int b) {
          const int i = est_index[std::min(a, b)], j = est_index[std::max(a, b)];
          return by.at({i, j});
        };
        const auto lsd_groups = letter_groups(means, [&](int a, int b) {
          const auto* pc = lookup(a, b);
          return std::abs(pc->difference) > pc->lsd;
        });
        const auto hsd_groups = letter_groups(means, [&](int a, int b) {
          const auto* pc = lookup(a, b);
          return std::abs(pc->difference) > pc->hsd;
        });
        for (int i = 0; i < ke; ++i) {
          tm.levels[est_index[i]].group_lsd = lsd_groups[i];
          tm.levels[est_index[i]].group_hsd = hsd_groups[i];
        }
      } else if (options.comparisons) {
        tm.note = "too many levels to list every pair; the LSD and HSD are for an average pair";
      }
      if (first_treatment && std::abs(out.grand_mean) > 0) {
        out.mdd_percent = detectable_difference_in_se(avg_df, options.alpha, kDetectionPower) * tm.sed /
                          std::abs(out.grand_mean) * 100.0;
      }
    }
    if (ke < static_cast<int>(combos.size()))
      tm.note = std::to_string(combos.size() - ke) + " of the " + std::to_string(combos.size()) +
                " means are not estimable (a combination never measured)";
    first_treatment = false;
    out.means.push_back(std::move(tm));
  }

  // ---- random entries: predictions and heritability
  int entry_term = -1;
  for (size_t k = 0; k < random_terms.size(); ++k) {
    const ModelTerm& t = m.terms[random_terms[k]];
    if (t.role == TermRole::treatment && t.factors.size() == 1 && m.treatments_random) entry_term = static_cast<int>(k);
  }
  if (entry_term >= 0) {
    std::vector<int> none;
    const auto base_row = average_row(none, none);
    const double base = base_row ? fit.estimate(*base_row) : out.grand_mean;
    const TermCells& tc = fit.random_term_cells(entry_term);
    const auto& u = fit.blups(entry_term);
    const auto pev = fit.prediction_error_variance(entry_term);
    const int f = m.terms[random_terms[entry_term]].factors[0];
    for (size_t i = 0; i < u.size(); ++i)
      out.predictions.push_back({c.names[f][tc.levels[i][0]], u[i], base + u[i], std::sqrt(std::max(0.0, pev[i])), tc.count[i]});
    std::sort(out.predictions.begin(), out.predictions.end(),
              [](const EntryPrediction& a, const EntryPrediction& b) { return a.predicted > b.predicted; });
    const double sg = params[entry_term].value;
    if (sg > 0) {
      out.heritability = 1.0 - fit.mean_difference_pev(entry_term) / (2.0 * sg);
    } else {
      out.heritability = 0.0;
    }
    if (balanced && !(out.trend && out.trend->chosen)) {
      const double se2 = params.back().value;
      const double r_total = static_cast<double>(out.n) / c.factors[f].levels;
      double denom = sg + se2 / r_total;
      for (size_t k = 0; k < random_terms.size(); ++k) {
        const ModelTerm& t = m.terms[random_terms[k]];
        if (t.factors.size() == 2 && m.site_factor >= 0 &&
            std::find(t.factors.begin(), t.factors.end(), f) != t.factors.end())
          denom += params[k].value / c.factors[m.site_factor].levels;
      }
      out.heritability_classical = denom > 0 ? sg / denom : 0.0;
    }
  }

  // ---- why this differs from the analysis of variance
  if (!random_terms.empty() && !balanced)
    out.differs_because.push_back(
        "the data are not balanced (missing plots or combinations): the analysis of variance's stratum F tests and "
        "expected-mean-square components are approximate here; REML uses the exact likelihood and recovers the "
        "information between blocks");
  if (m.kind == DesignKind::multi_site && !m.sites_random && !m.without_interaction)
    out.differs_because.push_back(
        "entry x site is taken as random here: entries are compared against their spread across sites (the analysis "
        "of variance with fixed sites tests them against the plot error)");
  if (out.trend && out.trend->chosen) out.differs_because.push_back("field trend is modelled (rows and columns correlated)");
  for (size_t k = 0; k < random_terms.size() && k < out.components.size(); ++k)
    if (const auto& ce = out.components[k]; ce.at_bound && !(out.trend && out.trend->chosen))
      out.differs_because.push_back("the variance of '" + ce.source +
                                    "' is held at zero, where the analysis of variance's estimate is negative");
  if (!covariates.empty()) out.differs_because.push_back("a straight-line trend over the field is in the model");
  return out;
}

}  // namespace furrow
