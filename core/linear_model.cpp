// linear_model.cpp: the three fitting methods behind LinearModel.
//
// Index of sections:
//   [cells]      term cells and the orthogonality test
//   [basis]      orthonormal bases built term by term (pivoted QR)
//   [sequences]  nested model sequences for sequential and partial sums
//   [means]      least-squares means over the reference grid
//   [build/fit]  the public entry points
//
// Why projections: for a nested sequence of models M0 < M1 < ... each term's
// sum of squares is |P_k y|^2 where P_k projects onto the part of M_k that is
// orthogonal to M_{k-1}. Computing it as a squared norm of Q_k' y keeps every
// digit, where RSS(M_{k-1}) - RSS(M_k) would cancel.

#include "core/linear_model.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <numeric>
#include <unordered_map>

#include "core/exact_decimal.h"

namespace furrow {

const char* fit_method_name(FitMethod method) {
  switch (method) {
    case FitMethod::automatic: return "automatic";
    case FitMethod::balanced: return "balanced";
    case FitMethod::absorbed: return "absorbed";
    case FitMethod::cells: return "cells";
    case FitMethod::dense: return "dense";
  }
  return "?";
}

double CellMeans::difference_var_factor(int i, int j) const {
  double s = v[i] + v[j];
  for (int c = 0; c < a_width; ++c) {
    const double d = a[i * a_width + c] - a[j * a_width + c];
    s += d * d;
  }
  return s;
}

namespace {

using Eigen::MatrixXd;
using Eigen::VectorXd;

// Relative size below which a residualised column counts as dependent. The
// columns are 0/1 indicators (norm >= 1), so genuine dependence leaves
// residues near 1e-14 while the smallest genuine pivot in designs of up to
// 10^5 plots stays far above 1e-9.
constexpr double kRankTolerance = 1e-9;

// Above this many indicator columns (all terms' cells and the intercept) the
// dense method's n x p basis costs more than the cells method, which never
// forms the largest term's columns (measured: 900 plots of a 6-site, 50-entry
// trial need 367 columns and 0.2 s dense; ours at 300: the dense method
// stays on the small designs the published checks cover).
constexpr int kDenseColumnLimit = 300;
// The cells method forms the other terms' columns: beyond this many it is
// not used (no design Furrow offers comes near).
constexpr int kCellsRestColumnLimit = 2000;

// ---------------------------------------------------------------- [cells]

bool is_subset(const std::vector<int>& small, const std::vector<int>& big) {
  return std::includes(big.begin(), big.end(), small.begin(), small.end());
}

std::vector<int> intersect(const std::vector<int>& a, const std::vector<int>& b) {
  std::vector<int> out;
  std::set_intersection(a.begin(), a.end(), b.begin(), b.end(), std::back_inserter(out));
  return out;
}

std::vector<int> unite(const std::vector<int>& a, const std::vector<int>& b) {
  std::vector<int> out;
  std::set_union(a.begin(), a.end(), b.begin(), b.end(), std::back_inserter(out));
  return out;
}

// Counts per cell for a factor set, keyed by the compact cell id of each obs.
std::vector<int> cell_ids(const CodedDesign& d, const std::vector<int>& factors, int* cells) {
  std::vector<int> ids(d.n);
  std::unordered_map<long long, int> index;
  for (int i = 0; i < d.n; ++i) {
    long long key = 0;
    for (int f : factors) key = key * (d.factors[f].levels + 1) + d.factors[f].codes[i];
    auto [it, inserted] = index.emplace(key, static_cast<int>(index.size()));
    ids[i] = it->second;
  }
  *cells = static_cast<int>(index.size());
  return ids;
}

// True when every term's cells are equally replicated and every pair of terms
// has proportional cell counts within the cells of their common factors:
// then all term projections commute and sweeping cell means in model order
// gives the exact analysis (sequential = partial).
bool is_orthogonal(const CodedDesign& d) {
  const int t = static_cast<int>(d.terms.size());
  for (int a = 0; a < t; ++a) {
    int cells = 0;
    const std::vector<int> ids = cell_ids(d, d.terms[a], &cells);
    std::vector<int> count(cells, 0);
    for (int id : ids) ++count[id];
    if (std::adjacent_find(count.begin(), count.end(), std::not_equal_to<>()) != count.end()) return false;
  }
  for (int a = 0; a < t; ++a) {
    for (int b = a + 1; b < t; ++b) {
      const std::vector<int>& s = d.terms[a];
      const std::vector<int>& u = d.terms[b];
      if (is_subset(s, u) || is_subset(u, s)) continue;
      int ns = 0, nu = 0, nj = 0, nm = 0;
      const auto ids_s = cell_ids(d, s, &ns);
      const auto ids_u = cell_ids(d, u, &nu);
      const auto ids_j = cell_ids(d, unite(s, u), &nj);
      const auto ids_m = cell_ids(d, intersect(s, u), &nm);
      std::vector<long long> cs(ns), cu(nu), cj(nj), cm(nm);
      for (int i = 0; i < d.n; ++i) { ++cs[ids_s[i]]; ++cu[ids_u[i]]; ++cj[ids_j[i]]; ++cm[ids_m[i]]; }
      for (int i = 0; i < d.n; ++i)
        if (cj[ids_j[i]] * cm[ids_m[i]] != cs[ids_s[i]] * cu[ids_u[i]]) return false;
    }
  }
  return true;
}

MatrixXd indicator_columns(const TermCells& cells, int n) {
  MatrixXd x = MatrixXd::Zero(n, static_cast<Eigen::Index>(cells.levels.size()));
  for (int i = 0; i < n; ++i) x(i, cells.cell_of[i]) = 1.0;
  return x;
}

// ---------------------------------------------------------------- [basis]

struct Basis {
  std::vector<MatrixXd> blocks;

  // Adds the part of `c` orthogonal to the basis; returns the rank added.
  // `reference_norm` is the size a non-degenerate column has.
  int add(MatrixXd c, double reference_norm) {
    // Classical Gram-Schmidt twice against earlier blocks ("twice is enough").
    for (int pass = 0; pass < 2; ++pass)
      for (const MatrixXd& q : blocks) c.noalias() -= q * (q.transpose() * c);
    const Eigen::Index n = c.rows();
    if (c.cols() == 0) { blocks.emplace_back(n, 0); return 0; }
    Eigen::ColPivHouseholderQR<MatrixXd> qr(c);
    const MatrixXd& r = qr.matrixQR();
    const double tol = kRankTolerance * std::max(1.0, reference_norm);
    int rank = 0;
    for (Eigen::Index k = 0; k < std::min(r.rows(), r.cols()); ++k)
      if (std::abs(r(k, k)) > tol) ++rank;
    MatrixXd q = qr.householderQ() * MatrixXd::Identity(n, rank);
    blocks.push_back(std::move(q));
    return rank;
  }

  int rank() const {
    int r = 0;
    for (const MatrixXd& q : blocks) r += static_cast<int>(q.cols());
    return r;
  }

  // All blocks side by side: n x rank (n given, since the basis may be empty).
  MatrixXd stacked(Eigen::Index n) const {
    MatrixXd all(n, rank());
    Eigen::Index col = 0;
    for (const MatrixXd& q : blocks) { all.middleCols(col, q.cols()) = q; col += q.cols(); }
    return all;
  }
};

double max_column_norm(const MatrixXd& c) {
  return c.cols() == 0 ? 0.0 : c.colwise().norm().maxCoeff();
}

}  // namespace

TermCells term_cells(const CodedDesign& d, const std::vector<int>& factors) {
  TermCells out;
  int cells = 0;
  out.cell_of = cell_ids(d, factors, &cells);
  out.levels.assign(cells, {});
  out.count.assign(cells, 0);
  for (int i = 0; i < d.n; ++i) {
    const int c = out.cell_of[i];
    if (out.count[c]++ == 0)
      for (int f : factors) out.levels[c].push_back(d.factors[f].codes[i]);
  }
  return out;
}

// ------------------------------------------------------------ [sequences]

struct LinearModel::Impl {
  CodedDesign design;
  FitMethod method = FitMethod::dense;
  std::vector<TermCells> cells;   // per term
  int absorbed_term = -1;         // absorbed method: the absorbed term
  std::vector<double> absorbed_inverse_count;  // per observation, 1 / n of its level

  struct Sequence {
    std::vector<int> order;       // term indices
    Basis raw;                    // block 0 = intercept; then terms before the absorbed one (or all)
    Basis within;                 // absorbed: terms other than the absorbed one, within its levels
    int absorbed_position = -1;   // position of the absorbed term in `order`
    int prefix_blocks = 0;        // within-blocks that belong to terms before the absorbed one
    std::vector<double> df;       // per step
  };
  Sequence sequential;
  std::vector<int> partial_sequence;   // per term: index into `partials`, -1 = same as sequential
  std::vector<Sequence> partials;

  // Least-squares means machinery.
  struct MeansPlan {
    int term = -1;
    std::vector<char> estimable;
    MatrixXd a;                   // cells x width
    std::vector<double> v;        // independent part of the variance
  };
  std::vector<MeansPlan> means;
  double residual_df = 0;

  // Cells method: each model of the sequences, fitted by absorbing one term.
  struct CellModel {
    std::vector<int> terms;     // ascending term indices
    int absorbed = -1;          // the absorbed term (-1: the intercept-only model)
    std::vector<int> rest;      // terms not contained in the absorbed one
    MatrixXd q;                 // n x k: the rest's columns within the absorbed cells, orthonormal
    MatrixXd qtx;               // k x (rest columns): Q' times those columns (R of the QR, unpermuted)
    double rank = 1;            // cells of the absorbed term + k
  };
  std::vector<CellModel> cell_models;
  struct CellStep { int lower = 0, upper = 0; };   // models before and after a term
  std::vector<CellStep> cell_sequential, cell_partial;   // per term
  int cell_full = -1;                                    // the full model (means, residuals)
  // Means of the cells method: per means cell, the absorbed cells it averages and their weights.
  std::vector<std::vector<std::vector<std::pair<int, double>>>> cell_weights;   // per means plan

  int cell_model(std::vector<int> terms, int absorbed);
  VectorXd cell_residual(const CellModel& cm, const VectorXd& yc) const;

  MatrixXd within_columns(const MatrixXd& x) const;
  Sequence make_sequence(const std::vector<int>& order) const;
  std::vector<double> increments(const Sequence& s, const VectorXd& yc, const VectorXd& yw,
                                 double between_absorbed) const;
};

MatrixXd LinearModel::Impl::within_columns(const MatrixXd& x) const {
  const TermCells& f = cells[absorbed_term];
  MatrixXd means = MatrixXd::Zero(static_cast<Eigen::Index>(f.count.size()), x.cols());
  for (int i = 0; i < design.n; ++i) means.row(f.cell_of[i]) += x.row(i);
  for (size_t c = 0; c < f.count.size(); ++c) means.row(c) /= f.count[c];
  MatrixXd w = x;
  for (int i = 0; i < design.n; ++i) w.row(i) -= means.row(f.cell_of[i]);
  return w;
}

// Subtracts from each row the mean of its cell of `cells`.
MatrixXd within_cells(const MatrixXd& x, const TermCells& f, int n) {
  MatrixXd means = MatrixXd::Zero(static_cast<Eigen::Index>(f.count.size()), x.cols());
  for (int i = 0; i < n; ++i) means.row(f.cell_of[i]) += x.row(i);
  for (size_t c = 0; c < f.count.size(); ++c) means.row(c) /= f.count[c];
  MatrixXd w = x;
  for (int i = 0; i < n; ++i) w.row(i) -= means.row(f.cell_of[i]);
  return w;
}

namespace {

// An orthonormal basis Q of the columns of x (n x p, p small), and Q' x, by
// Cholesky QR applied twice ("CholeskyQR2": Fukaya, Nakatsukasa, Yanagisawa
// & Yamamoto 2014, ScalA'14 31-38; Yamamoto et al. 2015, ETNA 44, 306-326):
// as orthogonal as Householder QR for condition numbers below about 1e8, in
// matrix-matrix products. Dependent columns (these are indicator columns
// within cells, where whole groups sum to zero) are found first by a
// diagonally pivoted LDL' of x'x and left out. False (the caller then uses
// pivoted Householder QR) when x is too ill-conditioned for this.
bool cholesky_qr2(const MatrixXd& x, MatrixXd* q, MatrixXd* qtx) {
  const Eigen::Index n = x.rows(), p = x.cols();
  MatrixXd g(p, p);
  g.setZero();
  g.selfadjointView<Eigen::Lower>().rankUpdate(x.transpose());
  g.triangularView<Eigen::StrictlyUpper>() = g.transpose();
  const Eigen::LDLT<MatrixXd> ldlt(g);
  if (ldlt.info() != Eigen::Success) return false;
  const Eigen::VectorXd d = ldlt.vectorD();
  const double top = d.size() ? d.maxCoeff() : 0.0;
  if (!(top > 0)) {
    *q = MatrixXd(n, 0);
    *qtx = MatrixXd(0, p);
    return true;
  }
  // Pivots in order; D falls off a cliff at the rank: dependent directions
  // leave rounding (about 1e-14 of the largest for 10^4 plots), independent
  // ones of indicator columns far more than 1e-8. Anything between: fall back.
  Eigen::PermutationMatrix<Eigen::Dynamic> perm(p);
  perm = ldlt.transpositionsP();
  const Eigen::PermutationMatrix<Eigen::Dynamic> inverse = perm.inverse();
  std::vector<int> chosen;
  for (Eigen::Index k = 0; k < p; ++k) {
    if (d(k) > 1e-8 * top) chosen.push_back(inverse.indices()(k));
    else if (d(k) > 1e-11 * top) return false;
  }
  std::sort(chosen.begin(), chosen.end());
  const Eigen::Index r = static_cast<Eigen::Index>(chosen.size());
  MatrixXd xs(n, r), gs(r, r);
  for (Eigen::Index j = 0; j < r; ++j) {
    xs.col(j) = x.col(chosen[j]);
    for (Eigen::Index i = 0; i < r; ++i) gs(i, j) = g(chosen[i], chosen[j]);
  }
  MatrixXd basis = xs;
  for (int pass = 0; pass < 2; ++pass) {
    if (pass == 1) {
      gs.setZero();
      gs.selfadjointView<Eigen::Lower>().rankUpdate(basis.transpose());
      gs.triangularView<Eigen::StrictlyUpper>() = gs.transpose();
    }
    const Eigen::LLT<MatrixXd> llt(gs);
    if (llt.info() != Eigen::Success) return false;
    llt.matrixU().solveInPlace<Eigen::OnTheRight>(basis);   // basis <- basis U^-1
  }
  // The second pass must leave an orthonormal basis; else fall back.
  MatrixXd check(r, r);
  check.setZero();
  check.selfadjointView<Eigen::Lower>().rankUpdate(basis.transpose());
  check.triangularView<Eigen::StrictlyUpper>() = check.transpose();
  if ((check - MatrixXd::Identity(r, r)).cwiseAbs().maxCoeff() > 1e-12) return false;
  *qtx = basis.transpose() * x;
  *q = std::move(basis);
  return true;
}

}  // namespace

int LinearModel::Impl::cell_model(std::vector<int> terms, int absorbed) {
  std::sort(terms.begin(), terms.end());
  if (!terms.empty() && absorbed < 0) {
    absorbed = terms.front();
    for (int t : terms)
      if (cells[t].levels.size() > cells[absorbed].levels.size()) absorbed = t;
  }
  for (size_t k = 0; k < cell_models.size(); ++k)
    if (cell_models[k].terms == terms && cell_models[k].absorbed == absorbed) return static_cast<int>(k);
  CellModel cm;
  cm.terms = terms;
  cm.absorbed = absorbed;
  if (absorbed >= 0) {
    const int n = design.n;
    for (int t : terms)
      if (!is_subset(design.terms[t], design.terms[absorbed])) cm.rest.push_back(t);
    int width = 0;
    for (int t : cm.rest) width += static_cast<int>(cells[t].levels.size());
    cm.q = MatrixXd(n, 0);
    if (width > 0) {
      MatrixXd x(n, width);
      int col = 0;
      for (int t : cm.rest) {
        x.middleCols(col, cells[t].levels.size()) = indicator_columns(cells[t], n);
        col += static_cast<int>(cells[t].levels.size());
      }
      const double norm = max_column_norm(x);
      const MatrixXd xw = within_cells(x, cells[absorbed], n);
      if (!cholesky_qr2(xw, &cm.q, &cm.qtx)) {
        Eigen::ColPivHouseholderQR<MatrixXd> qr(xw);
        const MatrixXd& r = qr.matrixQR();
        const double tol = kRankTolerance * std::max(1.0, norm);
        int rank = 0;
        for (Eigen::Index k = 0; k < std::min(r.rows(), r.cols()); ++k)
          if (std::abs(r(k, k)) > tol) ++rank;
        cm.q = qr.householderQ() * MatrixXd::Identity(n, rank);
        // Q' X_w = R P': what the means need, without forming X again.
        const MatrixXd r_top = qr.matrixR().topRows(rank).triangularView<Eigen::Upper>();
        cm.qtx = r_top * qr.colsPermutation().transpose();
      }
    }
    cm.rank = static_cast<double>(cells[absorbed].levels.size()) + static_cast<double>(cm.q.cols());
  }
  cell_models.push_back(std::move(cm));
  return static_cast<int>(cell_models.size()) - 1;
}

// y (centred) less its projection on the model: y less its absorbed-cell
// means, less the projection of that on the other terms' columns within the cells.
VectorXd LinearModel::Impl::cell_residual(const CellModel& cm, const VectorXd& yc) const {
  if (cm.absorbed < 0) return yc;
  const TermCells& f = cells[cm.absorbed];
  std::vector<CompensatedSum> sums(f.count.size());
  const int n = design.n;
  for (int i = 0; i < n; ++i) sums[f.cell_of[i]].add(yc(i));
  std::vector<double> mean(f.count.size());
  for (size_t c = 0; c < f.count.size(); ++c) mean[c] = sums[c].value() / f.count[c];
  VectorXd r(n);
  for (int i = 0; i < n; ++i) r(i) = yc(i) - mean[f.cell_of[i]];
  if (cm.q.cols() > 0) r.noalias() -= cm.q * (cm.q.transpose() * r);
  return r;
}

LinearModel::Impl::Sequence LinearModel::Impl::make_sequence(const std::vector<int>& order) const {
  Sequence s;
  s.order = order;
  const int n = design.n;
  s.raw.add(MatrixXd::Constant(n, 1, 1.0), std::sqrt(static_cast<double>(n)));
  if (method == FitMethod::absorbed) {
    const auto it = std::find(order.begin(), order.end(), absorbed_term);
    s.absorbed_position = it == order.end() ? -1 : static_cast<int>(it - order.begin());
  }
  for (size_t k = 0; k < order.size(); ++k) {
    const int t = order[k];
    const bool absorbed_here = static_cast<int>(k) == s.absorbed_position;
    // The absorbed term's many indicator columns are never formed.
    const MatrixXd x = absorbed_here ? MatrixXd() : indicator_columns(cells[t], n);
    const double norm = absorbed_here ? 0.0 : max_column_norm(x);
    if (s.absorbed_position < 0) {
      s.df.push_back(s.raw.add(x, norm));
    } else if (static_cast<int>(k) < s.absorbed_position) {
      s.df.push_back(s.raw.add(x, norm));
      s.within.add(within_columns(x), norm);
      ++s.prefix_blocks;
    } else if (static_cast<int>(k) == s.absorbed_position) {
      // span(1, prefix, F) = span(F) + span(prefix within F).
      const int prefix_raw = s.raw.rank() - 1;
      const int prefix_within = s.within.rank();
      s.df.push_back(static_cast<double>(cells[t].count.size()) - 1 + prefix_within - prefix_raw);
    } else {
      s.df.push_back(s.within.add(within_columns(x), norm));
    }
  }
  return s;
}

namespace {
double squared_projection(const MatrixXd& q, const VectorXd& y) {
  return q.cols() == 0 ? 0.0 : (q.transpose() * y).squaredNorm();
}
}  // namespace

std::vector<double> LinearModel::Impl::increments(const Sequence& s, const VectorXd& yc, const VectorXd& yw,
                                                  double between_absorbed) const {
  std::vector<double> out;
  for (size_t k = 0; k < s.order.size(); ++k) {
    const int pos = static_cast<int>(k);
    if (s.absorbed_position < 0 || pos < s.absorbed_position) {
      out.push_back(squared_projection(s.raw.blocks[k + 1], yc));
    } else if (pos == s.absorbed_position) {
      double ss = between_absorbed;
      for (int b = 0; b < s.prefix_blocks; ++b) ss += squared_projection(s.within.blocks[b], yw);
      for (int b = 0; b < s.prefix_blocks; ++b) ss -= squared_projection(s.raw.blocks[b + 1], yc);
      out.push_back(std::max(0.0, ss));
    } else {
      out.push_back(squared_projection(s.within.blocks[s.prefix_blocks + (pos - s.absorbed_position - 1)], yw));
    }
  }
  return out;
}

// ---------------------------------------------------------------- [means]

namespace {

// Column layout of a list of terms: the offset of each term's first column.
struct Layout {
  std::vector<int> terms;
  std::vector<int> offset;
  int width = 0;
};

Layout make_layout(const std::vector<int>& terms, const std::vector<TermCells>& cells, int first_offset) {
  Layout l;
  l.terms = terms;
  l.width = first_offset;
  for (int t : terms) { l.offset.push_back(l.width); l.width += static_cast<int>(cells[t].levels.size()); }
  return l;
}

// Average design row over the reference grid for one cell of a means term.
// Returns false when some hypothetical plot falls in a cell the data never
// saw (the mean is then not estimable).
// Look-up from a term's level key to its column in a layout.
using ColumnIndex = std::vector<std::unordered_map<long long, int>>;

ColumnIndex make_column_index(const CodedDesign& d, const std::vector<TermCells>& cells, const Layout& layout) {
  ColumnIndex column_of(layout.terms.size());
  for (size_t k = 0; k < layout.terms.size(); ++k) {
    const TermCells& tc = cells[layout.terms[k]];
    for (size_t c = 0; c < tc.levels.size(); ++c) {
      long long key = 0;
      for (size_t j = 0; j < tc.levels[c].size(); ++j)
        key = key * (d.factors[d.terms[layout.terms[k]][j]].levels + 1) + tc.levels[c][j];
      column_of[k][key] = layout.offset[k] + static_cast<int>(c);
    }
  }
  return column_of;
}

// Calls `visit` with the factor assignment of every point of the reference
// grid that agrees with the target levels. False when a group has no
// observed combination agreeing with the target, or `visit` says stop.
template <class Visit>
bool for_each_grid_point(const CodedDesign& d, const std::vector<std::vector<std::vector<int>>>& group_combos,
                         const std::vector<int>& target_factors, const std::vector<int>& target_levels, Visit visit) {
  std::vector<int> assignment(d.factors.size(), -1);
  for (size_t k = 0; k < target_factors.size(); ++k) assignment[target_factors[k]] = target_levels[k];
  std::vector<std::vector<const std::vector<int>*>> choices(d.grid_groups.size());
  for (size_t g = 0; g < d.grid_groups.size(); ++g) {
    for (const auto& combo : group_combos[g]) {
      bool ok = true;
      for (size_t k = 0; k < d.grid_groups[g].size(); ++k) {
        const int f = d.grid_groups[g][k];
        if (assignment[f] >= 0 && assignment[f] != combo[k]) { ok = false; break; }
      }
      if (ok) choices[g].push_back(&combo);
    }
    if (choices[g].empty()) return false;
  }
  std::vector<size_t> pick(d.grid_groups.size(), 0);
  while (true) {
    for (size_t g = 0; g < d.grid_groups.size(); ++g)
      for (size_t k = 0; k < d.grid_groups[g].size(); ++k) assignment[d.grid_groups[g][k]] = (*choices[g][pick[g]])[k];
    if (!visit(assignment)) return false;
    size_t g = 0;
    while (g < pick.size() && ++pick[g] == choices[g].size()) { pick[g] = 0; ++g; }
    if (g == pick.size()) return true;
  }
}

bool grid_average_row(const CodedDesign& d, const ColumnIndex& column_of,
                      const std::vector<std::vector<std::vector<int>>>& group_combos,
                      const std::vector<int>& target_factors, const std::vector<int>& target_levels,
                      const Layout& layout, bool with_intercept, VectorXd* row) {
  *row = VectorXd::Zero(layout.width);
  long long combos = 0;
  const bool seen = for_each_grid_point(d, group_combos, target_factors, target_levels, [&](const std::vector<int>& at) {
    if (with_intercept) (*row)(0) += 1.0;
    for (size_t k = 0; k < layout.terms.size(); ++k) {
      long long key = 0;
      for (int f : d.terms[layout.terms[k]]) key = key * (d.factors[f].levels + 1) + at[f];
      const auto it = column_of[k].find(key);
      if (it == column_of[k].end()) return false;
      (*row)(it->second) += 1.0;
    }
    ++combos;
    return true;
  });
  if (!seen || combos == 0) return false;
  *row /= static_cast<double>(combos);
  return true;
}

std::vector<std::vector<std::vector<int>>> observed_group_combos(const CodedDesign& d) {
  std::vector<std::vector<std::vector<int>>> out;
  for (const auto& group : d.grid_groups) out.push_back(term_cells(d, group).levels);
  return out;
}

// a_i = T^-1 U' L_i where R' = U T (thin QR): then L_i' beta = a_i' (Q' y) and
// Var(L_i' beta) = sigma^2 |a_i|^2 for the model whose orthonormal basis is Q
// and whose columns satisfy X = Q R.
struct CoefficientMap {
  MatrixXd u;   // p x r
  MatrixXd t;   // r x r upper triangular
};

CoefficientMap coefficient_map(const MatrixXd& r) {
  CoefficientMap m;
  Eigen::HouseholderQR<MatrixXd> qr(r.transpose());
  const Eigen::Index p = r.cols(), k = r.rows();
  m.u = qr.householderQ() * MatrixXd::Identity(p, k);
  m.t = qr.matrixQR().topRows(k).triangularView<Eigen::Upper>();
  return m;
}

bool apply_map(const CoefficientMap& m, const VectorXd& l, VectorXd* a) {
  const VectorXd ul = m.u.transpose() * l;
  const double off = (l - m.u * ul).norm();
  if (off > 1e-8 * std::max(1.0, l.norm())) return false;
  *a = m.t.triangularView<Eigen::Upper>().solve(ul);
  return true;
}

}  // namespace

// ------------------------------------------------------------ [build/fit]

Result<LinearModel> LinearModel::build(const CodedDesign& design, FitMethod forced) {
  assert(design.n > 0);
  auto impl = std::make_shared<Impl>();
  impl->design = design;
  const CodedDesign& d = impl->design;
  const int nt = static_cast<int>(d.terms.size());
  for (int t = 0; t < nt; ++t) impl->cells.push_back(term_cells(d, d.terms[t]));

  // Which method applies.
  int absorbable = -1;
  for (int t = 0; t < nt; ++t) {
    if (d.terms[t].size() != 1) continue;
    bool contained = false;
    for (int u = 0; u < nt; ++u)
      if (u != t && is_subset(d.terms[t], d.terms[u])) contained = true;
    bool means_ok = true;
    for (int m : d.means_terms) if (m != t) means_ok = false;
    if (contained || !means_ok) continue;
    if (absorbable < 0 || impl->cells[t].levels.size() > impl->cells[absorbable].levels.size()) absorbable = t;
  }
  // The cells method absorbs, for the means, the largest term that contains
  // every means term.
  int cells_absorbed = -1;
  for (int t = 0; t < nt; ++t) {
    bool contains_all = true;
    for (int m : d.means_terms) contains_all = contains_all && is_subset(d.terms[m], d.terms[t]);
    if (contains_all && (cells_absorbed < 0 || impl->cells[t].levels.size() > impl->cells[cells_absorbed].levels.size()))
      cells_absorbed = t;
  }
  int dense_columns = 1, rest_columns = 0;
  for (int t = 0; t < nt; ++t) {
    dense_columns += static_cast<int>(impl->cells[t].levels.size());
    if (cells_absorbed >= 0 && !is_subset(d.terms[t], d.terms[cells_absorbed]))
      rest_columns += static_cast<int>(impl->cells[t].levels.size());
  }
  const bool cells_apply = cells_absorbed >= 0 && rest_columns <= kCellsRestColumnLimit;
  FitMethod method = forced;
  if (method == FitMethod::automatic)
    method = is_orthogonal(d)                                       ? FitMethod::balanced
             : absorbable >= 0                                      ? FitMethod::absorbed
             : cells_apply && dense_columns > kDenseColumnLimit     ? FitMethod::cells
                                                                    : FitMethod::dense;
  if (method == FitMethod::cells && !cells_apply)
    return make_problem("the cells method needs a term that contains every treatment term");
  if (method == FitMethod::balanced && !is_orthogonal(d))
    return make_problem("the balanced method needs equally replicated, orthogonal terms");
  if (method == FitMethod::absorbed && absorbable < 0)
    return make_problem("no factor can be absorbed in this design");
  impl->method = method;

  if (method == FitMethod::balanced) {
    double model_df = 1;
    for (int t = 0; t < nt; ++t) {
      double df = static_cast<double>(impl->cells[t].levels.size()) - 1;
      for (int u = 0; u < t; ++u)
        if (is_subset(d.terms[u], d.terms[t]) && d.terms[u] != d.terms[t])
          df -= impl->sequential.df[u];
      impl->sequential.df.push_back(df);
      impl->sequential.order.push_back(t);
      model_df += df;
    }
    impl->residual_df = d.n - model_df;
  } else if (method == FitMethod::cells) {
    std::vector<int> all(nt);
    std::iota(all.begin(), all.end(), 0);
    impl->cell_full = impl->cell_model(all, cells_absorbed);
    const auto model_of = [&](const std::vector<int>& terms) {
      std::vector<int> sorted = terms;
      std::sort(sorted.begin(), sorted.end());
      return sorted == all ? impl->cell_full : impl->cell_model(sorted, -1);
    };
    for (int t = 0; t < nt; ++t) {
      const std::vector<int> before(all.begin(), all.begin() + t), upto(all.begin(), all.begin() + t + 1);
      impl->cell_sequential.push_back({model_of(before), model_of(upto)});
      std::vector<int> order;
      for (int u = 0; u < nt; ++u)
        if (u != t && !is_subset(d.terms[t], d.terms[u])) order.push_back(u);
      const int lower = model_of(order);
      order.push_back(t);
      impl->cell_partial.push_back({lower, model_of(order)});
    }
    impl->residual_df = d.n - impl->cell_models[impl->cell_full].rank;
  } else {
    if (method == FitMethod::absorbed) {
      impl->absorbed_term = absorbable;
      const TermCells& f = impl->cells[absorbable];
      impl->absorbed_inverse_count.resize(d.n);
      for (int i = 0; i < d.n; ++i) impl->absorbed_inverse_count[i] = 1.0 / f.count[f.cell_of[i]];
    }
    std::vector<int> all(nt);
    std::iota(all.begin(), all.end(), 0);
    impl->sequential = impl->make_sequence(all);
    const double rank = method == FitMethod::absorbed
        ? static_cast<double>(impl->cells[absorbable].levels.size()) + impl->sequential.within.rank()
        : impl->sequential.raw.rank();
    impl->residual_df = d.n - rank;
    // Partial sums: term t after every term that does not contain it.
    impl->partial_sequence.assign(nt, -1);
    for (int t = 0; t < nt; ++t) {
      std::vector<int> order;
      for (int u = 0; u < nt; ++u)
        if (u != t && !is_subset(d.terms[t], d.terms[u])) order.push_back(u);
      order.push_back(t);
      if (std::equal(order.begin(), order.end(), all.begin(), all.begin() + t + 1) &&
          static_cast<int>(order.size()) == t + 1)
        continue;
      impl->partial_sequence[t] = static_cast<int>(impl->partials.size());
      impl->partials.push_back(impl->make_sequence(order));
    }
  }
  if (impl->residual_df < 0.5)
    return make_problem("the design leaves no degrees of freedom for error: every plot is needed to estimate "
                        "the model terms, so nothing is left to measure plot-to-plot variation");

  // Least-squares means plans.
  const auto combos = observed_group_combos(d);
  for (int m : d.means_terms) {
    Impl::MeansPlan plan;
    plan.term = m;
    const TermCells& tc = impl->cells[m];
    const int ncell = static_cast<int>(tc.levels.size());
    plan.estimable.assign(ncell, 1);
    plan.v.assign(ncell, 0.0);
    if (method == FitMethod::balanced) {
      for (int c = 0; c < ncell; ++c) plan.v[c] = 1.0 / tc.count[c];
      plan.a = MatrixXd(ncell, 0);
    } else if (method == FitMethod::cells) {
      // mean_i = sum_c w_ic ybar_c + d_i' beta, beta the other terms'
      // coefficients within the absorbed cells and d_i their grid average
      // less the w-weighted average over the plots of those cells. The cells
      // of two means differ, so Var(mean_i - mean_j) = v_i + v_j + |a_i - a_j|^2.
      const Impl::CellModel& full = impl->cell_models[impl->cell_full];
      const TermCells& ac = impl->cells[full.absorbed];
      const Layout layout = make_layout(full.rest, impl->cells, 0);
      const Layout a_layout = make_layout({full.absorbed}, impl->cells, 0);
      const ColumnIndex column_of = make_column_index(d, impl->cells, layout);
      const ColumnIndex a_cell_of = make_column_index(d, impl->cells, a_layout);
      const int k = static_cast<int>(full.q.cols());
      plan.a = MatrixXd::Zero(ncell, k);
      std::vector<std::vector<std::pair<int, double>>> weights(ncell);
      MatrixXd cell_means_of_rest;   // per absorbed cell, the average of its plots' rest columns
      CoefficientMap map;
      if (layout.width > 0) {
        cell_means_of_rest = MatrixXd::Zero(static_cast<Eigen::Index>(ac.count.size()), layout.width);
        for (size_t j = 0; j < full.rest.size(); ++j) {
          const TermCells& rc = impl->cells[full.rest[j]];
          for (int i = 0; i < d.n; ++i) cell_means_of_rest(ac.cell_of[i], layout.offset[j] + rc.cell_of[i]) += 1.0;
        }
        for (size_t c = 0; c < ac.count.size(); ++c) cell_means_of_rest.row(c) /= ac.count[c];
        if (k > 0) map = coefficient_map(full.qtx);
      }
      for (int c = 0; c < ncell; ++c) {
        std::unordered_map<int, double> w;
        VectorXd g = VectorXd::Zero(layout.width);
        long long points = 0;
        const bool seen = for_each_grid_point(d, combos, d.terms[m], tc.levels[c], [&](const std::vector<int>& at) {
          long long key = 0;
          for (int f : d.terms[full.absorbed]) key = key * (d.factors[f].levels + 1) + at[f];
          const auto cell = a_cell_of[0].find(key);
          if (cell == a_cell_of[0].end()) return false;   // a cell no plot was measured in
          w[cell->second] += 1.0;
          for (size_t j = 0; j < layout.terms.size(); ++j) {
            long long rk = 0;
            for (int f : d.terms[layout.terms[j]]) rk = rk * (d.factors[f].levels + 1) + at[f];
            const auto col = column_of[j].find(rk);
            if (col == column_of[j].end()) return false;
            g(col->second) += 1.0;
          }
          ++points;
          return true;
        });
        if (!seen || points == 0) { plan.estimable[c] = 0; continue; }
        g /= static_cast<double>(points);
        VectorXd dvec = g;
        double v = 0;
        for (auto& [cell, weight] : w) {
          weight /= static_cast<double>(points);
          v += weight * weight / ac.count[cell];
          if (layout.width > 0) dvec -= weight * cell_means_of_rest.row(cell).transpose();
          weights[c].push_back({cell, weight});
        }
        std::sort(weights[c].begin(), weights[c].end());
        plan.v[c] = v;
        if (k > 0) {
          VectorXd a;
          if (!apply_map(map, dvec, &a)) { plan.estimable[c] = 0; continue; }
          plan.a.row(c) = a.transpose();
        } else if (layout.width > 0 && dvec.norm() > 1e-8 * std::max(1.0, g.norm())) {
          plan.estimable[c] = 0;   // the other terms' columns add nothing within the cells, yet the grid needs them
          continue;
        }
      }
      impl->cell_weights.push_back(std::move(weights));
    } else if (method == FitMethod::dense) {
      std::vector<int> all(nt);
      std::iota(all.begin(), all.end(), 0);
      const Layout layout = make_layout(all, impl->cells, 1);
      MatrixXd x(d.n, layout.width);
      x.col(0).setOnes();
      for (int t = 0; t < nt; ++t)
        x.middleCols(layout.offset[t], impl->cells[t].levels.size()) = indicator_columns(impl->cells[t], d.n);
      const MatrixXd q = impl->sequential.raw.stacked(d.n);
      const CoefficientMap map = coefficient_map(q.transpose() * x);
      const ColumnIndex column_of = make_column_index(d, impl->cells, layout);
      plan.a = MatrixXd::Zero(ncell, q.cols());
      for (int c = 0; c < ncell; ++c) {
        VectorXd l, a;
        if (!grid_average_row(d, column_of, combos, d.terms[m], tc.levels[c], layout, true, &l) ||
            !apply_map(map, l, &a)) {
          plan.estimable[c] = 0;
          continue;
        }
        plan.a.row(c) = a.transpose();
      }
    } else {
      // Absorbed: mean_i = ybar_i + d_i' beta_within, d_i = grid average of the
      // other terms' columns minus their average over the plots of level i.
      assert(m == impl->absorbed_term);
      std::vector<int> rest;
      for (int t = 0; t < nt; ++t) if (t != m) rest.push_back(t);
      const Layout layout = make_layout(rest, impl->cells, 0);
      for (int c = 0; c < ncell; ++c) plan.v[c] = 1.0 / tc.count[c];
      const MatrixXd q = impl->sequential.within.stacked(d.n);
      plan.a = MatrixXd::Zero(ncell, q.cols());
      if (layout.width > 0) {
        MatrixXd x(d.n, layout.width);
        for (size_t k = 0; k < rest.size(); ++k)
          x.middleCols(layout.offset[k], impl->cells[rest[k]].levels.size()) =
              indicator_columns(impl->cells[rest[k]], d.n);
        MatrixXd level_means = MatrixXd::Zero(ncell, layout.width);
        for (int i = 0; i < d.n; ++i) level_means.row(tc.cell_of[i]) += x.row(i);
        for (int c = 0; c < ncell; ++c) level_means.row(c) /= tc.count[c];
        const CoefficientMap map = coefficient_map(q.transpose() * impl->within_columns(x));
        const ColumnIndex column_of = make_column_index(d, impl->cells, layout);
        for (int c = 0; c < ncell; ++c) {
          VectorXd g, a;
          if (!grid_average_row(d, column_of, combos, d.terms[m], tc.levels[c], layout, false, &g) ||
              !apply_map(map, g - level_means.row(c).transpose(), &a)) {
            plan.estimable[c] = 0;
            continue;
          }
          plan.a.row(c) = a.transpose();
        }
      }
    }
    impl->means.push_back(std::move(plan));
  }
  return LinearModel(std::move(impl));
}

FitMethod LinearModel::method() const { return impl_->method; }
double LinearModel::residual_df() const { return impl_->residual_df; }
const CodedDesign& LinearModel::design() const { return impl_->design; }

ResponseFit LinearModel::fit(const std::vector<double>& y_in) const {
  const Impl& m = *impl_;
  const CodedDesign& d = m.design;
  assert(static_cast<int>(y_in.size()) == d.n);
  const int n = d.n, nt = static_cast<int>(d.terms.size());
  ResponseFit out;
  out.terms.resize(nt);
  out.residual_df = m.residual_df;

  CompensatedSum total;
  for (double v : y_in) total.add(v);
  out.mean = total.value() / n;
  VectorXd yc(n);
  for (int i = 0; i < n; ++i) yc(i) = y_in[i] - out.mean;
  out.total_ss = yc.squaredNorm();

  VectorXd e;                       // residuals
  VectorXd within_projection;       // absorbed: Q_w' y_w of the sequential sequence
  if (m.method == FitMethod::balanced) {
    e = yc;
    for (int t = 0; t < nt; ++t) {
      const TermCells& tc = m.cells[t];
      const int ncell = static_cast<int>(tc.levels.size());
      std::vector<CompensatedSum> sums(ncell);
      for (int i = 0; i < n; ++i) sums[tc.cell_of[i]].add(e(i));
      std::vector<double> effect(ncell);
      CompensatedSum ss;
      for (int c = 0; c < ncell; ++c) {
        effect[c] = sums[c].value() / tc.count[c];
        ss.add(tc.count[c] * effect[c] * effect[c]);
      }
      for (int i = 0; i < n; ++i) e(i) -= effect[tc.cell_of[i]];
      out.terms[t] = {m.sequential.df[t], ss.value(), m.sequential.df[t], ss.value()};
    }
    out.leverages.assign(n, (n - m.residual_df) / n);
  } else if (m.method == FitMethod::cells) {
    std::vector<VectorXd> residual(m.cell_models.size());
    std::vector<char> have(m.cell_models.size(), 0);
    const auto residual_of = [&](int id) -> const VectorXd& {
      if (!have[id]) {
        residual[id] = m.cell_residual(m.cell_models[id], yc);
        have[id] = 1;
      }
      return residual[id];
    };
    // A step's sum of squares: |P_upper y - P_lower y|^2, the squared norm
    // of y's projection on what the term adds (the difference of residuals).
    const auto step = [&](const Impl::CellStep& st) {
      return std::pair{m.cell_models[st.upper].rank - m.cell_models[st.lower].rank,
                       (residual_of(st.lower) - residual_of(st.upper)).squaredNorm()};
    };
    for (int t = 0; t < nt; ++t) {
      const auto [df_s, ss_s] = step(m.cell_sequential[t]);
      const auto [df_p, ss_p] = step(m.cell_partial[t]);
      out.terms[t] = {df_s, ss_s, df_p, ss_p};
    }
    e = residual_of(m.cell_full);
    const Impl::CellModel& full = m.cell_models[m.cell_full];
    const TermCells& ac = m.cells[full.absorbed];
    out.leverages.assign(n, 0.0);
    for (int i = 0; i < n; ++i)
      out.leverages[i] = 1.0 / ac.count[ac.cell_of[i]] + (full.q.cols() ? full.q.row(i).squaredNorm() : 0.0);
    if (full.q.cols() > 0) {
      std::vector<CompensatedSum> sums(ac.count.size());
      for (int i = 0; i < n; ++i) sums[ac.cell_of[i]].add(yc(i));
      VectorXd yw(n);
      for (int i = 0; i < n; ++i) yw(i) = yc(i) - sums[ac.cell_of[i]].value() / ac.count[ac.cell_of[i]];
      within_projection = full.q.transpose() * yw;
    }
  } else {
    VectorXd yw;
    double between = 0;
    if (m.method == FitMethod::absorbed) {
      const TermCells& f = m.cells[m.absorbed_term];
      std::vector<CompensatedSum> sums(f.count.size());
      for (int i = 0; i < n; ++i) sums[f.cell_of[i]].add(yc(i));
      std::vector<double> level_mean(f.count.size());
      CompensatedSum b;
      for (size_t c = 0; c < f.count.size(); ++c) {
        level_mean[c] = sums[c].value() / f.count[c];
        b.add(f.count[c] * level_mean[c] * level_mean[c]);
      }
      between = b.value();
      yw.resize(n);
      for (int i = 0; i < n; ++i) yw(i) = yc(i) - level_mean[f.cell_of[i]];
    }
    const std::vector<double> seq = m.increments(m.sequential, yc, yw, between);
    for (int t = 0; t < nt; ++t) {
      out.terms[t].df_sequential = m.sequential.df[t];
      out.terms[t].ss_sequential = seq[t];
      if (m.partial_sequence[t] < 0) {
        out.terms[t].df_partial = m.sequential.df[t];
        out.terms[t].ss_partial = seq[t];
      } else {
        const Impl::Sequence& s = m.partials[m.partial_sequence[t]];
        out.terms[t].df_partial = s.df.back();
        out.terms[t].ss_partial = m.increments(s, yc, yw, between).back();
      }
    }
    // Residuals by successive projection (modified Gram-Schmidt order).
    const Basis& basis = m.method == FitMethod::absorbed ? m.sequential.within : m.sequential.raw;
    e = m.method == FitMethod::absorbed ? yw : yc;
    out.leverages.assign(n, 0.0);
    for (size_t b = 0; b < basis.blocks.size(); ++b) {
      const MatrixXd& q = basis.blocks[b];
      if (q.cols() == 0) continue;
      e.noalias() -= q * (q.transpose() * e);
      for (int i = 0; i < n; ++i) out.leverages[i] += q.row(i).squaredNorm();
    }
    if (m.method == FitMethod::absorbed) {
      for (int i = 0; i < n; ++i) out.leverages[i] += m.absorbed_inverse_count[i];
      within_projection = basis.stacked(d.n).transpose() * yw;
    }
  }
  out.residual_ss = e.squaredNorm();
  out.residuals.assign(e.data(), e.data() + n);
  out.fitted.resize(n);
  for (int i = 0; i < n; ++i) out.fitted[i] = y_in[i] - e(i);

  // Least-squares means.
  VectorXd full_projection;
  if (m.method == FitMethod::dense) {
    VectorXd y = Eigen::Map<const VectorXd>(y_in.data(), n);
    full_projection = m.sequential.raw.stacked(d.n).transpose() * y;
  }
  std::vector<double> absorbed_mean;   // cells method: each absorbed cell's plain mean
  if (m.method == FitMethod::cells) {
    const TermCells& ac = m.cells[m.cell_models[m.cell_full].absorbed];
    std::vector<CompensatedSum> sums(ac.count.size());
    for (int i = 0; i < n; ++i) sums[ac.cell_of[i]].add(y_in[i]);
    absorbed_mean.resize(ac.count.size());
    for (size_t c = 0; c < ac.count.size(); ++c) absorbed_mean[c] = sums[c].value() / ac.count[c];
  }
  for (size_t p = 0; p < m.means.size(); ++p) {
    const Impl::MeansPlan& plan = m.means[p];
    const TermCells& tc = m.cells[plan.term];
    const int ncell = static_cast<int>(tc.levels.size());
    CellMeans cm;
    cm.term = plan.term;
    cm.cell_levels = tc.levels;
    cm.n = tc.count;
    std::vector<CompensatedSum> sums(ncell);
    for (int i = 0; i < n; ++i) sums[tc.cell_of[i]].add(y_in[i]);
    cm.raw_mean.resize(ncell);
    for (int c = 0; c < ncell; ++c) cm.raw_mean[c] = sums[c].value() / tc.count[c];
    cm.estimable = plan.estimable;
    cm.v = plan.v;
    cm.a_width = static_cast<int>(plan.a.cols());
    cm.a.resize(static_cast<size_t>(ncell) * cm.a_width);
    cm.mean.resize(ncell);
    cm.var_factor.resize(ncell);
    for (int c = 0; c < ncell; ++c) {
      for (int k = 0; k < cm.a_width; ++k) cm.a[c * cm.a_width + k] = plan.a(c, k);
      const double a2 = plan.a.row(c).squaredNorm();
      cm.var_factor[c] = plan.v[c] + a2;
      if (!plan.estimable[c]) { cm.mean[c] = 0; continue; }
      if (m.method == FitMethod::balanced) cm.mean[c] = cm.raw_mean[c];
      else if (m.method == FitMethod::dense) cm.mean[c] = plan.a.row(c).dot(full_projection);
      else if (m.method == FitMethod::cells) {
        CompensatedSum mean;
        for (const auto& [cell, weight] : m.cell_weights[p][c]) mean.add(weight * absorbed_mean[cell]);
        if (cm.a_width) mean.add(plan.a.row(c).dot(within_projection));
        cm.mean[c] = mean.value();
      }
      else cm.mean[c] = cm.raw_mean[c] + (cm.a_width ? plan.a.row(c).dot(within_projection) : 0.0);
    }
    out.means.push_back(std::move(cm));
  }
  return out;
}

}  // namespace furrow
