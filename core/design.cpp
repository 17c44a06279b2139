#include "core/design.h"

#include <algorithm>

namespace furrow {

namespace {
struct KindName { DesignKind kind; const char* key; const char* title; };
constexpr KindName kKinds[] = {
    {DesignKind::completely_randomised, "crd", "completely randomised"},
    {DesignKind::randomised_complete_block, "rcbd", "randomised complete block"},
    {DesignKind::latin_square, "latin", "Latin square"},
    {DesignKind::factorial, "factorial", "factorial"},
    {DesignKind::split_plot, "split-plot", "split-plot in blocks"},
    {DesignKind::multi_site, "multi-site", "several sites combined"},
};

class ModelBuilder {
 public:
  int factor(const std::string& column) {
    const auto it = std::find(model.factor_columns.begin(), model.factor_columns.end(), column);
    if (it != model.factor_columns.end()) {
      duplicate = column;
      return static_cast<int>(it - model.factor_columns.begin());
    }
    model.factor_columns.push_back(column);
    return static_cast<int>(model.factor_columns.size()) - 1;
  }
  int term(std::string label, std::vector<int> factors, TermRole role, int error_term = -1) {
    std::sort(factors.begin(), factors.end());
    model.terms.push_back({std::move(label), std::move(factors), role, error_term});
    return static_cast<int>(model.terms.size()) - 1;
  }
  DesignModel model;
  std::string duplicate;   // a column asked for in two roles
};

Problem need(const char* what, DesignKind kind) {
  return make_problem(std::string("the ") + design_kind_title(kind) + " design needs " + what);
}
}  // namespace

std::optional<DesignKind> parse_design_kind(std::string_view key) {
  for (const KindName& k : kKinds)
    if (key == k.key) return k.kind;
  return std::nullopt;
}

const char* design_kind_key(DesignKind kind) {
  for (const KindName& k : kKinds)
    if (k.kind == kind) return k.key;
  return "?";
}

const char* design_kind_title(DesignKind kind) {
  for (const KindName& k : kKinds)
    if (k.kind == kind) return k.title;
  return "?";
}

Result<DesignModel> build_design_model(const DesignRoles& r) {
  ModelBuilder b;
  b.model.kind = r.kind;
  b.model.sites_random = r.sites_random;
  b.model.treatments_random = r.treatments_random;
  b.model.without_interaction = r.without_interaction;
  if (r.without_interaction && r.kind != DesignKind::factorial && r.kind != DesignKind::split_plot &&
      r.kind != DesignKind::multi_site)
    return make_problem(std::string("a ") + design_kind_title(r.kind) + " design has no treatment interaction to leave out");
  const size_t nt = r.treatments.size();
  switch (r.kind) {
    case DesignKind::completely_randomised: {
      if (nt != 1) return need("exactly one treatment column (use factorial for several)", r.kind);
      const int t = b.factor(r.treatments[0]);
      b.term(r.treatments[0], {t}, TermRole::treatment);
      break;
    }
    case DesignKind::randomised_complete_block: {
      if (nt != 1) return need("exactly one treatment column (use factorial for several)", r.kind);
      if (r.block.empty()) return need("a block column", r.kind);
      const int bl = b.factor(r.block);
      const int t = b.factor(r.treatments[0]);
      b.model.block_factor = bl;
      b.term(r.block, {bl}, TermRole::blocking);
      b.term(r.treatments[0], {t}, TermRole::treatment);
      break;
    }
    case DesignKind::latin_square: {
      if (nt != 1) return need("exactly one treatment column", r.kind);
      if (r.row.empty() || r.column.empty()) return need("a row column and a column column", r.kind);
      const int ro = b.factor(r.row);
      const int co = b.factor(r.column);
      const int t = b.factor(r.treatments[0]);
      b.term(r.row, {ro}, TermRole::blocking);
      b.term(r.column, {co}, TermRole::blocking);
      b.term(r.treatments[0], {t}, TermRole::treatment);
      break;
    }
    case DesignKind::factorial: {
      if (nt < 2 || nt > 3) return need("two or three treatment columns", r.kind);
      if (!r.block.empty()) {
        b.model.block_factor = b.factor(r.block);
        b.term(r.block, {b.model.block_factor}, TermRole::blocking);
      }
      std::vector<int> f;
      for (const std::string& c : r.treatments) f.push_back(b.factor(c));
      for (size_t i = 0; i < nt; ++i) b.term(r.treatments[i], {f[i]}, TermRole::treatment);
      if (r.without_interaction) break;
      for (size_t i = 0; i < nt; ++i)
        for (size_t j = i + 1; j < nt; ++j)
          b.term(r.treatments[i] + " x " + r.treatments[j], {f[i], f[j]}, TermRole::treatment);
      if (nt == 3)
        b.term(r.treatments[0] + " x " + r.treatments[1] + " x " + r.treatments[2], {f[0], f[1], f[2]},
               TermRole::treatment);
      break;
    }
    case DesignKind::split_plot: {
      if (r.block.empty()) return need("a block column", r.kind);
      std::string main = r.main_plot, sub = r.sub_plot;
      if (main.empty() && nt == 2) main = r.treatments[0];
      if (sub.empty() && nt == 2) sub = r.treatments[1];
      if (main.empty() || sub.empty()) return need("a main-plot column and a sub-plot column", r.kind);
      const int bl = b.factor(r.block);
      const int a = b.factor(main);
      const int s = b.factor(sub);
      b.model.block_factor = bl;
      const int block_term = b.term(r.block, {bl}, TermRole::blocking);
      const int main_term = b.term(main, {a}, TermRole::treatment);
      const int main_error = b.term(r.block + " x " + main, {bl, a}, TermRole::error);
      b.term(sub, {s}, TermRole::treatment);
      if (!r.without_interaction) b.term(main + " x " + sub, {a, s}, TermRole::treatment);
      // Main-plot effects (and blocks, which sit in the same stratum) are
      // tested against the main-plot error block x main plot.
      b.model.terms[block_term].error_term = main_error;
      b.model.terms[main_term].error_term = main_error;
      b.model.treatment_factors = {a, s};
      // Means average over the main plots measured: a lost main plot (every
      // sub-plot of one block x main-plot cell) leaves the others to estimate them.
      b.model.grid_groups = {{bl, a}, {s}};
      break;
    }
    case DesignKind::multi_site: {
      if (nt != 1) return need("exactly one treatment column", r.kind);
      if (r.site.empty() || r.block.empty()) return need("a site column and a block column", r.kind);
      const int si = b.factor(r.site);
      const int bl = b.factor(r.block);
      const int t = b.factor(r.treatments[0]);
      b.model.site_factor = si;
      b.model.block_factor = bl;
      const int site_term = b.term(r.site, {si}, TermRole::blocking);
      const int blocks_term = b.term(r.block + " within " + r.site, {si, bl}, TermRole::blocking);
      const int treat_term = b.term(r.treatments[0], {t}, TermRole::treatment);
      // Sites are tested against blocks within sites (common practice in
      // combined analyses); with random sites the treatment is tested against
      // the site x treatment interaction (ARCHITECTURE.md, STATISTICS.md) -
      // without it in the model, against the residual, which then holds it.
      b.model.terms[site_term].error_term = blocks_term;
      if (!r.without_interaction) {
        const int inter_term = b.term(r.site + " x " + r.treatments[0], {si, t}, TermRole::treatment);
        if (r.sites_random) b.model.terms[treat_term].error_term = inter_term;
      }
      b.model.grid_groups.push_back({si, bl});
      b.model.grid_groups.push_back({t});
      b.model.treatment_factors = {t};
      break;
    }
  }
  if (!b.duplicate.empty())
    return make_problem("column '" + b.duplicate + "' is given two roles in the design", b.duplicate);

  DesignModel& m = b.model;
  if (m.treatment_factors.empty())
    for (const std::string& c : r.treatments)
      m.treatment_factors.push_back(static_cast<int>(
          std::find(m.factor_columns.begin(), m.factor_columns.end(), c) - m.factor_columns.begin()));
  if (m.grid_groups.empty())
    for (int f = 0; f < static_cast<int>(m.factor_columns.size()); ++f) m.grid_groups.push_back({f});
  return m;
}

}  // namespace furrow
