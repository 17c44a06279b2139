#include "core/trial_plan.h"

#include <algorithm>
#include <cstdio>
#include <set>

#include "core/random_stream.h"

namespace furrow {

namespace {
struct KindKey { TraitKind kind; const char* key; };
constexpr KindKey kTraitKinds[] = {{TraitKind::decimal, "decimal"}, {TraitKind::count, "count"},
                                   {TraitKind::score, "score"},     {TraitKind::category, "category"},
                                   {TraitKind::percent, "percent"}, {TraitKind::date, "date"},
                                   {TraitKind::text, "text"}};
// Grids larger than this are refused: 100,000 plots is far beyond any trial.
constexpr long kMaxPlots = 100000;
}  // namespace

std::optional<TraitKind> parse_trait_kind(const std::string& key) {
  for (const auto& k : kTraitKinds)
    if (key == k.key) return k.kind;
  return std::nullopt;
}

const char* trait_kind_key(TraitKind kind) {
  for (const auto& k : kTraitKinds)
    if (k.kind == kind) return k.key;
  return "?";
}

std::vector<std::vector<int>> treatment_combinations(const TrialPlan& plan) {
  std::vector<std::vector<int>> out{{}};
  for (const TreatmentFactor& f : plan.factors) {
    std::vector<std::vector<int>> next;
    for (const auto& prefix : out)
      for (int l = 0; l < static_cast<int>(f.levels.size()); ++l) {
        auto c = prefix;
        c.push_back(l);
        next.push_back(std::move(c));
      }
    out = std::move(next);
  }
  return out;
}

std::string treatment_label(const TrialPlan& plan, const std::vector<int>& levels) {
  std::string s;
  for (size_t k = 0; k < levels.size(); ++k) {
    if (k) s += " x ";
    s += plan.factors[k].levels[levels[k]];
  }
  return s;
}

namespace {

struct Cell { int row, column; };

// The cells of each block, each block's cells in row-major order.
Result<std::vector<std::vector<Cell>>> block_cells(const TrialPlan& p, int blocks) {
  std::vector<std::vector<Cell>> out(blocks);
  if (p.block_shape == BlockShape::row_strips) {
    if (p.rows % blocks != 0)
      return make_problem("the grid's " + std::to_string(p.rows) + " rows cannot be split into " +
                          std::to_string(blocks) + " bands of whole rows");
    const int per = p.rows / blocks;
    for (int r = 0; r < p.rows; ++r)
      for (int c = 0; c < p.columns; ++c) out[r / per].push_back({r + 1, c + 1});
  } else if (p.block_shape == BlockShape::column_strips) {
    if (p.columns % blocks != 0)
      return make_problem("the grid's " + std::to_string(p.columns) + " columns cannot be split into " +
                          std::to_string(blocks) + " bands of whole columns");
    const int per = p.columns / blocks;
    for (int r = 0; r < p.rows; ++r)
      for (int c = 0; c < p.columns; ++c) out[c / per].push_back({r + 1, c + 1});
  } else {
    if (p.block_rows <= 0 || p.block_columns <= 0 || p.rows % p.block_rows != 0 ||
        p.columns % p.block_columns != 0 ||
        (p.rows / p.block_rows) * (p.columns / p.block_columns) != blocks)
      return make_problem("blocks of " + std::to_string(p.block_rows) + " x " + std::to_string(p.block_columns) +
                          " plots do not tile the " + std::to_string(p.rows) + " x " + std::to_string(p.columns) +
                          " grid into " + std::to_string(blocks) + " blocks");
    const int across = p.columns / p.block_columns;
    for (int r = 0; r < p.rows; ++r)
      for (int c = 0; c < p.columns; ++c)
        out[(r / p.block_rows) * across + c / p.block_columns].push_back({r + 1, c + 1});
  }
  return out;
}

int walk_position(const TrialPlan& p, int row, int column) {
  if (p.walk == WalkOrder::serpentine_rows) {
    const int along = (row % 2 == 1) ? column : p.columns - column + 1;
    return (row - 1) * p.columns + along;
  }
  const int along = (column % 2 == 1) ? row : p.rows - row + 1;
  return (column - 1) * p.rows + along;
}

}  // namespace

namespace {
Result<Layout> randomise_one_site(const TrialPlan& p, RandomStream& rng);
}  // namespace

Result<Layout> randomise(const TrialPlan& p) {
  RandomStream rng(p.seed);
  if (p.design != DesignKind::multi_site) return randomise_one_site(p, rng);
  if (p.sites.size() < 2) return make_problem("a several-sites plan needs at least two sites");
  std::set<std::string> seen;
  for (const std::string& s : p.sites)
    if (s.empty() || !seen.insert(s).second) return make_problem("site '" + s + "' is empty or repeated");
  TrialPlan one = p;
  one.design = DesignKind::randomised_complete_block;
  Layout all;
  const int grid = p.rows * p.columns;
  const int site_width = static_cast<int>(std::to_string(p.sites.size()).size());
  for (size_t s = 0; s < p.sites.size(); ++s) {
    // Each site is randomised independently, from its own stream.
    RandomStream site_rng(p.seed + 0x9E3779B97F4A7C15ULL * (s + 1));
    auto layout = randomise_one_site(one, site_rng);
    if (!layout) return layout.problem();
    char prefix[16];
    std::snprintf(prefix, sizeof prefix, "%0*d", site_width, static_cast<int>(s + 1));
    for (PlannedPlot& plot : layout->plots) {
      plot.site = static_cast<int>(s);
      plot.walk_order += static_cast<int>(s) * grid;
      plot.label = prefix + plot.label;
      all.plots.push_back(std::move(plot));
    }
  }
  return all;
}

namespace {
Result<Layout> randomise_one_site(const TrialPlan& p, RandomStream& rng) {
  if (p.factors.empty()) return make_problem("the plan has no treatment factor");
  std::set<std::string> names;
  for (const TreatmentFactor& f : p.factors) {
    if (f.name.empty()) return make_problem("a treatment factor has no name");
    if (!names.insert(f.name).second) return make_problem("treatment factor '" + f.name + "' appears twice");
    if (f.levels.size() < 2) return make_problem("treatment factor '" + f.name + "' needs at least two levels");
    std::set<std::string> seen;
    for (const std::string& l : f.levels)
      if (l.empty() || !seen.insert(l).second)
        return make_problem("treatment factor '" + f.name + "' has an empty or repeated level '" + l + "'");
  }
  if (p.rows <= 0 || p.columns <= 0) return make_problem("the field grid needs at least one row and one column");
  if (static_cast<long>(p.rows) * p.columns > kMaxPlots) return make_problem("the field grid has more than 100,000 plots");
  if (p.replicates < 1) return make_problem("the plan needs at least one replicate");
  const auto combos = treatment_combinations(p);
  const int t = static_cast<int>(combos.size());
  const int grid = p.rows * p.columns;
  Layout layout;
  auto add = [&](const Cell& cell, int block, const std::vector<int>& levels) {
    PlannedPlot plot;
    plot.block = block;
    plot.row = cell.row;
    plot.column = cell.column;
    plot.walk_order = walk_position(p, cell.row, cell.column);
    plot.levels = levels;
    layout.plots.push_back(std::move(plot));
  };
  switch (p.design) {
    case DesignKind::completely_randomised: {
      if (grid != t * p.replicates)
        return make_problem("a completely randomised trial of " + std::to_string(t) + " treatments x " +
                            std::to_string(p.replicates) + " replicates needs " + std::to_string(t * p.replicates) +
                            " plots, the grid has " + std::to_string(grid));
      std::vector<int> order;
      for (int r = 0; r < p.replicates; ++r)
        for (int k = 0; k < t; ++k) order.push_back(k);
      rng.shuffle(order);
      for (int i = 0; i < grid; ++i) add({i / p.columns + 1, i % p.columns + 1}, 0, combos[order[i]]);
      break;
    }
    case DesignKind::randomised_complete_block:
    case DesignKind::factorial: {
      if (p.design == DesignKind::randomised_complete_block && p.factors.size() != 1)
        return make_problem("a randomised complete block plan has one treatment factor (use factorial for more)");
      if (p.design == DesignKind::factorial && (p.factors.size() < 2 || p.factors.size() > 3))
        return make_problem("a factorial plan has two or three treatment factors");
      if (grid != t * p.replicates)
        return make_problem(std::to_string(p.replicates) + " blocks of " + std::to_string(t) + " treatments need " +
                            std::to_string(t * p.replicates) + " plots, the grid has " + std::to_string(grid));
      auto blocks = block_cells(p, p.replicates);
      if (!blocks) return blocks.problem();
      for (int b = 0; b < p.replicates; ++b) {
        std::vector<int> order(t);
        for (int k = 0; k < t; ++k) order[k] = k;
        rng.shuffle(order);
        for (int i = 0; i < t; ++i) add((*blocks)[b][i], b + 1, combos[order[i]]);
      }
      break;
    }
    case DesignKind::latin_square: {
      if (p.factors.size() != 1) return make_problem("a Latin square plan has one treatment factor");
      if (p.rows != t || p.columns != t)
        return make_problem("a Latin square of " + std::to_string(t) + " treatments needs a " + std::to_string(t) +
                            " x " + std::to_string(t) + " grid");
      // A cyclic square with rows, columns and symbols permuted at random
      // (the usual randomisation of a standard square; Fisher & Yates).
      std::vector<int> rp(t), cp(t), sp(t);
      for (int k = 0; k < t; ++k) rp[k] = cp[k] = sp[k] = k;
      rng.shuffle(rp);
      rng.shuffle(cp);
      rng.shuffle(sp);
      for (int r = 0; r < t; ++r)
        for (int c = 0; c < t; ++c) add({r + 1, c + 1}, 0, combos[sp[(rp[r] + cp[c]) % t]]);
      break;
    }
    case DesignKind::split_plot: {
      if (p.factors.size() != 2) return make_problem("a split-plot plan has a main-plot factor and a sub-plot factor");
      const int a = static_cast<int>(p.factors[0].levels.size());
      const int bsub = static_cast<int>(p.factors[1].levels.size());
      if (grid != a * bsub * p.replicates)
        return make_problem(std::to_string(p.replicates) + " blocks of " + std::to_string(a) + " main plots x " +
                            std::to_string(bsub) + " sub-plots need " + std::to_string(a * bsub * p.replicates) +
                            " plots, the grid has " + std::to_string(grid));
      auto blocks = block_cells(p, p.replicates);
      if (!blocks) return blocks.problem();
      // Main plots are runs of sub-plots next to each other along a field row.
      const int block_width = p.block_shape == BlockShape::column_strips ? p.columns / p.replicates
                              : p.block_shape == BlockShape::rectangles ? p.block_columns
                                                                        : p.columns;
      if (block_width % bsub != 0)
        return make_problem("a main plot of " + std::to_string(bsub) + " sub-plots side by side does not fit a block " +
                            std::to_string(block_width) + " plots wide");
      for (int b = 0; b < p.replicates; ++b) {
        std::vector<int> mains(a);
        for (int k = 0; k < a; ++k) mains[k] = k;
        rng.shuffle(mains);
        for (int m = 0; m < a; ++m) {
          std::vector<int> subs(bsub);
          for (int k = 0; k < bsub; ++k) subs[k] = k;
          rng.shuffle(subs);
          for (int s = 0; s < bsub; ++s) add((*blocks)[b][m * bsub + s], b + 1, {mains[m], subs[s]});
        }
      }
      break;
    }
    case DesignKind::multi_site:
      return make_problem("several sites are randomised site by site");
  }
  // Walking order and stake labels: block digit(s) + plot number in the walk.
  std::sort(layout.plots.begin(), layout.plots.end(),
            [](const PlannedPlot& l, const PlannedPlot& r) { return l.walk_order < r.walk_order; });
  const int blocks = p.design == DesignKind::completely_randomised || p.design == DesignKind::latin_square ? 1 : p.replicates;
  const int per_block = grid / blocks;
  const int width = per_block >= 100 ? (per_block >= 1000 ? 4 : 3) : 2;
  std::vector<int> count(blocks + 1, 0);
  for (PlannedPlot& plot : layout.plots) {
    const int number = ++count[plot.block];
    char buf[32];
    if (plot.block > 0) std::snprintf(buf, sizeof buf, "%d%0*d", plot.block, width, number);
    else std::snprintf(buf, sizeof buf, "%0*d", std::max(3, width), number);
    plot.label = buf;
  }
  return layout;
}
}  // namespace

}  // namespace furrow
