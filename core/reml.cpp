// Average-information REML on sparse mixed-model equations (see reml.h for
// the published method behind each part).
#include "core/reml.h"

#include <Eigen/Dense>
#include <Eigen/OrderingMethods>
#include <Eigen/Sparse>
#include <Eigen/SparseCholesky>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <numeric>

#include "core/distributions.h"
#include "core/selected_inverse.h"
#include "core/text.h"

namespace furrow {

namespace {

using SpMat = Eigen::SparseMatrix<double>;
using Vec = Eigen::VectorXd;
using Mat = Eigen::MatrixXd;
using Triplet = Eigen::Triplet<double>;
using Cholesky = Eigen::SimplicialLLT<SpMat, Eigen::Lower, Eigen::NaturalOrdering<int>>;
using Permutation = Eigen::PermutationMatrix<Eigen::Dynamic, Eigen::Dynamic, int>;

constexpr double kLog2Pi = 1.8378770664093454836;
constexpr double kMaxCorrelation = 0.995;
constexpr int kMaxFixedColumns = 3000;
// Designs of more plots leave the plot error contrasts of its own in
// practice; the dense identifiability check below is only run up to this size.
constexpr int kMaxPlotsForIdentityCheck = 300;

// ------------------------------------------------------------- [AR1 pieces]

// Inverse of the m x m AR1 correlation matrix (tridiagonal) and its
// derivative with respect to rho, as (i, j, value) for |i - j| <= 1.
double ar1_inverse(int i, int j, int m, double rho) {
  const double s = 1.0 - rho * rho;
  if (m == 1) return 1.0;
  if (i == j) return (i == 0 || i == m - 1 ? 1.0 : 1.0 + rho * rho) / s;
  return std::abs(i - j) == 1 ? -rho / s : 0.0;
}
double ar1_inverse_derivative(int i, int j, int m, double rho) {
  const double s = 1.0 - rho * rho;
  if (m == 1) return 0.0;
  if (i == j) return (i == 0 || i == m - 1 ? 2.0 * rho : 4.0 * rho) / (s * s);
  return std::abs(i - j) == 1 ? -(1.0 + rho * rho) / (s * s) : 0.0;
}
Mat ar1_matrix(int m, double rho) {
  Mat k(m, m);
  for (int i = 0; i < m; ++i)
    for (int j = 0; j < m; ++j) k(i, j) = std::pow(rho, std::abs(i - j));
  return k;
}

// K^-1 = AR1(rho_c)^-1 (x) AR1(rho_r)^-1 over cells c * rows + r, or one of
// its two derivatives (which = 1 row, 2 column).
SpMat field_inverse(int rows, int cols, double rho_r, double rho_c, int which) {
  std::vector<Triplet> t;
  t.reserve(static_cast<size_t>(rows) * cols * 9);
  for (int c1 = 0; c1 < cols; ++c1)
    for (int c2 = std::max(0, c1 - 1); c2 <= std::min(cols - 1, c1 + 1); ++c2) {
      const double kc = which == 2 ? ar1_inverse_derivative(c1, c2, cols, rho_c) : ar1_inverse(c1, c2, cols, rho_c);
      for (int r1 = 0; r1 < rows; ++r1)
        for (int r2 = std::max(0, r1 - 1); r2 <= std::min(rows - 1, r1 + 1); ++r2) {
          const double kr =
              which == 1 ? ar1_inverse_derivative(r1, r2, rows, rho_r) : ar1_inverse(r1, r2, rows, rho_r);
          t.emplace_back(c1 * rows + r1, c2 * rows + r2, kc * kr);
        }
    }
  SpMat m(rows * cols, rows * cols);
  m.setFromTriplets(t.begin(), t.end());
  return m;
}

// ------------------------------------------------------------ [the problem]

struct ModelData {
  int n = 0;
  Vec y;            // centred
  double y_mean = 0;
  // Fixed part.
  int full_columns = 0;
  std::vector<int> term_first;
  std::vector<TermCells> fixed_cells;
  std::vector<int> selected;        // full column of each selected column
  std::vector<int> position;        // per full column: index among selected, or -1
  Mat alias;                        // p x full: T (X_full = X_sel T)
  double log_det_xtx = 0;
  SpMat x_sel;                      // n x p
  // Random part.
  std::vector<TermCells> random_cells;
  std::vector<SpMat> z;             // per random term, n x q_k
  bool spatial = false;
  int rows = 0, cols = 0;
  SpMat z_field;                    // n x rows * cols
  int n_var = 0;                    // number of parameters
  int field_var = -1, rho_row = -1, rho_col = -1, resid = -1;
};

// The current set of columns in the equations and its symbolic factorisation.
struct Equations {
  std::vector<char> active;          // per random term (and the field last)
  std::vector<int> offset;           // column offset per random term (and field), -1 if inactive
  int m = 0, p = 0;
  SpMat w;                           // n x m
  SpMat wtw;
  Vec wty;
  Cholesky chol;
  Permutation perm;                  // fill-reducing order: random effects by AMD, fixed effects last
  bool analysed = false;
};

struct Evaluation {
  double loglik = -INFINITY;
  bool ok = false;
  Vec s;          // solution of C* s = W'y
  Vec score;      // per parameter (0 for held ones)
  Mat ai;
  double sigma_e = 0;
  std::vector<double> trace_k;       // tr(K^-1 C^kk) per random term (+ field) (unscaled C)
  double trace_drow = 0, trace_dcol = 0;
  double ee = 0;                     // e'e
};

class Engine {
 public:
  explicit Engine(const ModelData& pr) : pr_(pr) {}

  int terms() const { return static_cast<int>(pr_.z.size()) + (pr_.spatial ? 1 : 0); }
  // Parameter index of random term k's variance (the field is term z.size()).
  int var_of_term(int k) const { return k < static_cast<int>(pr_.z.size()) ? k : pr_.field_var; }

  void set_active(const std::vector<char>& active) {
    if (eq_ && eq_->analysed && active == eq_->active) return;
    eq_ = std::make_unique<Equations>();
    eq_->active = active;
    eq_->p = static_cast<int>(pr_.selected.size());
    std::vector<Triplet> t;
    auto add = [&](const SpMat& block, int offset) {
      for (int c = 0; c < block.outerSize(); ++c)
        for (SpMat::InnerIterator it(block, c); it; ++it) t.emplace_back(it.row(), offset + it.col(), it.value());
    };
    add(pr_.x_sel, 0);
    int m = eq_->p;
    eq_->offset.assign(terms(), -1);
    for (int k = 0; k < terms(); ++k) {
      if (!active[k]) continue;
      const SpMat& zk = k < static_cast<int>(pr_.z.size()) ? pr_.z[k] : pr_.z_field;
      eq_->offset[k] = m;
      add(zk, m);
      m += static_cast<int>(zk.cols());
    }
    eq_->m = m;
    eq_->w.resize(pr_.n, m);
    eq_->w.setFromTriplets(t.begin(), t.end());
    eq_->wtw = SpMat(eq_->w.transpose() * eq_->w);
    eq_->wty = eq_->w.transpose() * pr_.y;
    eq_->analysed = false;
  }

  const Equations& equations() const { return *eq_; }

  SpMat coefficient(const std::vector<double>& th) const {
    const double se = th[pr_.resid];
    std::vector<Triplet> t;
    for (int k = 0; k < terms(); ++k) {
      if (!eq_->active[k]) continue;
      const double gamma = se / th[var_of_term(k)];
      const int off = eq_->offset[k];
      if (k < static_cast<int>(pr_.z.size())) {
        for (int i = 0; i < pr_.z[k].cols(); ++i) t.emplace_back(off + i, off + i, gamma);
      } else {
        const SpMat kinv = field_inverse(pr_.rows, pr_.cols, th[pr_.rho_row], th[pr_.rho_col], 0);
        for (int c = 0; c < kinv.outerSize(); ++c)
          for (SpMat::InnerIterator it(kinv, c); it; ++it) t.emplace_back(off + it.row(), off + it.col(), gamma * it.value());
      }
    }
    SpMat d(eq_->m, eq_->m);
    d.setFromTriplets(t.begin(), t.end());
    return eq_->wtw + d;
  }

  Evaluation evaluate(const std::vector<double>& th, bool derivatives) {
    Evaluation ev;
    const double se = th[pr_.resid];
    ev.sigma_e = se;
    if (!(se > 0)) return ev;
    const SpMat c = coefficient(th);
    if (!eq_->analysed) {
      order(c);
      eq_->chol.analyzePattern(permuted(c));
      eq_->analysed = true;
    }
    eq_->chol.factorize(permuted(c));
    if (eq_->chol.info() != Eigen::Success) return ev;
    const SpMat& lref = eq_->chol.matrixL().nestedExpression();
    double log_det_c = 0;
    for (int j = 0; j < lref.outerSize(); ++j) log_det_c += 2.0 * std::log(lref.valuePtr()[lref.outerIndexPtr()[j]]);
    ev.s = solve(eq_->wty);
    const Vec e = pr_.y - eq_->w * ev.s;
    ev.ee = e.squaredNorm();
    const double ypy = (pr_.y.squaredNorm() - ev.s.dot(eq_->wty)) / se;
    const int p = eq_->p;
    double log_det_g = 0;
    std::vector<int> q(terms(), 0);
    for (int k = 0; k < terms(); ++k) {
      if (!eq_->active[k]) continue;
      const bool field = k == static_cast<int>(pr_.z.size());
      q[k] = field ? pr_.rows * pr_.cols : static_cast<int>(pr_.z[k].cols());
      log_det_g += q[k] * std::log(th[var_of_term(k)]);
      if (field) {
        const double rr = th[pr_.rho_row], rc = th[pr_.rho_col];
        log_det_g += pr_.rows * (pr_.cols - 1.0) * std::log(1 - rc * rc) + pr_.cols * (pr_.rows - 1.0) * std::log(1 - rr * rr);
      }
    }
    const int n = pr_.n;
    ev.loglik = -0.5 * ((n - p) * kLog2Pi + n * std::log(se) + log_det_g + log_det_c - eq_->m * std::log(se) + ypy -
                        pr_.log_det_xtx);
    ev.ok = std::isfinite(ev.loglik);
    if (!derivatives || !ev.ok) return ev;

    // Selected inverse on the factor's pattern (scaled: S = C*^-1).
    zval_ = selected_inverse(lref);
    const auto& perm = eq_->perm.indices();
    auto s_at = [&](int i, int j) {   // element of C*^-1 in original indices
      int a = perm[i], b = perm[j];
      if (a < b) std::swap(a, b);
      return inverse_at(lref, a, b);
    };
    ev.score = Vec::Zero(pr_.n_var);
    ev.trace_k.assign(terms(), 0.0);
    std::vector<Vec> work(pr_.n_var);
    double sum_m = 0;   // sum over active terms of (q_k - tr(G^-1 C^kk))
    for (int k = 0; k < terms(); ++k) {
      if (!eq_->active[k]) continue;
      const int off = eq_->offset[k];
      const int v = var_of_term(k);
      const double sk = th[v];
      const Vec u = ev.s.segment(off, q[k]);
      if (k < static_cast<int>(pr_.z.size())) {
        double tr = 0;
        for (int i = 0; i < q[k]; ++i) tr += s_at(off + i, off + i);
        tr *= se;   // unscaled C^-1 = sigma_e C*^-1
        ev.trace_k[k] = tr;
        ev.score[v] = -0.5 * (q[k] / sk - tr / (sk * sk) - u.squaredNorm() / (sk * sk));
        sum_m += q[k] - tr / sk;
        work[v] = pr_.z[k] * u / sk;
      } else {
        const double rr = th[pr_.rho_row], rc = th[pr_.rho_col];
        const SpMat kinv = field_inverse(pr_.rows, pr_.cols, rr, rc, 0);
        const SpMat dr = field_inverse(pr_.rows, pr_.cols, rr, rc, 1);
        const SpMat dc = field_inverse(pr_.rows, pr_.cols, rr, rc, 2);
        auto trace_with = [&](const SpMat& a) {
          double tr = 0;
          for (int col = 0; col < a.outerSize(); ++col)
            for (SpMat::InnerIterator it(a, col); it; ++it) tr += it.value() * s_at(off + it.row(), off + it.col());
          return tr * se;
        };
        const double tr = trace_with(kinv);
        ev.trace_k[k] = tr;
        ev.score[v] = -0.5 * (q[k] / sk - tr / (sk * sk) - u.dot(kinv * u) / (sk * sk));
        sum_m += q[k] - tr / sk;
        work[v] = pr_.z_field * u / sk;
        const double dlog_r = -pr_.cols * (pr_.rows - 1.0) * 2 * rr / (1 - rr * rr);
        const double dlog_c = -pr_.rows * (pr_.cols - 1.0) * 2 * rc / (1 - rc * rc);
        ev.trace_drow = trace_with(dr);
        ev.trace_dcol = trace_with(dc);
        ev.score[pr_.rho_row] = -0.5 * (dlog_r + ev.trace_drow / sk + u.dot(dr * u) / sk);
        ev.score[pr_.rho_col] = -0.5 * (dlog_c + ev.trace_dcol / sk + u.dot(dc * u) / sk);
        work[pr_.rho_row] = -(pr_.z_field * field_times(rr, rc, dr * u));
        work[pr_.rho_col] = -(pr_.z_field * field_times(rr, rc, dc * u));
      }
    }
    ev.score[pr_.resid] = -0.5 * ((n - p - sum_m) / se - ev.ee / (se * se));
    work[pr_.resid] = e / se;
    // Average information: 1/2 w_i' P w_j with P w = (w - W t) / sigma_e.
    ev.ai = Mat::Zero(pr_.n_var, pr_.n_var);
    std::vector<Vec> pw(pr_.n_var);
    for (int i = 0; i < pr_.n_var; ++i) {
      if (work[i].size() == 0) continue;
      const Vec t = solve(Vec(eq_->w.transpose() * work[i]));
      pw[i] = (work[i] - eq_->w * t) / se;
    }
    for (int i = 0; i < pr_.n_var; ++i)
      for (int j = 0; j <= i; ++j) {
        if (pw[i].size() == 0 || pw[j].size() == 0) continue;
        ev.ai(i, j) = ev.ai(j, i) = 0.5 * work[i].dot(pw[j]);
      }
    return ev;
  }

  // K v over the grid (K = AR1(rho_c) (x) AR1(rho_r)).
  Vec field_times(double rr, double rc, const Vec& v) const {
    const Mat kr = ar1_matrix(pr_.rows, rr), kc = ar1_matrix(pr_.cols, rc);
    const Eigen::Map<const Mat> m(v.data(), pr_.rows, pr_.cols);
    const Mat out = kr * m * kc.transpose();
    return Eigen::Map<const Vec>(out.data(), out.size());
  }

  // Columns of C*^-1 for the given original indices.
  Mat inverse_columns(const std::vector<int>& cols) {
    Mat out(eq_->m, static_cast<Eigen::Index>(cols.size()));
    for (size_t j = 0; j < cols.size(); ++j) {
      Vec e = Vec::Zero(eq_->m);
      e[cols[j]] = 1.0;
      out.col(static_cast<Eigen::Index>(j)) = solve(e);
    }
    return out;
  }
  Vec solve(const Vec& b) {
    const Vec pb = eq_->perm * b;
    const Vec z = eq_->chol.solve(pb);
    return eq_->perm.transpose() * z;
  }
  double diag_inverse(int i) {
    const SpMat& lref = eq_->chol.matrixL().nestedExpression();
    const int a = eq_->perm.indices()[i];
    return inverse_at(lref, a, a);
  }

 private:
  SpMat permuted(const SpMat& c) const {
    SpMat out(c.rows(), c.cols());
    out = c.selfadjointView<Eigen::Lower>().twistedBy(eq_->perm);
    return out;
  }

  // The elimination order: the random effects first, in approximate
  // minimum degree order among themselves, then the fixed effects. Fixed
  // effects (entries) touch plots all over the field; eliminated last they
  // fill only their own dense corner instead of the whole factor.
  void order(const SpMat& c) {
    const int m = eq_->m, p = eq_->p, mr = m - p;
    eq_->perm.resize(m);
    auto& ind = eq_->perm.indices();
    for (int i = 0; i < p; ++i) ind[i] = mr + i;
    if (mr > 0) {
      const SpMat block = c.bottomRightCorner(mr, mr);
      Permutation pinv;
      Eigen::AMDOrdering<int> amd;
      amd(block, pinv);
      const Permutation pr = pinv.inverse();
      for (int j = 0; j < mr; ++j) ind[p + j] = pr.indices()[j];
    }
  }

  // Z(a, b), a >= b, in permuted indices; 0 outside the pattern (never
  // needed there: the traces only ask for elements of C's own pattern).
  double inverse_at(const SpMat& l, int a, int b) const {
    const int* outer = l.outerIndexPtr();
    const int* inner = l.innerIndexPtr();
    const int* lo = inner + outer[b];
    const int* hi = inner + outer[b + 1];
    const int* it = std::lower_bound(lo, hi, a);
    if (it == hi || *it != a) return 0.0;
    return zval_[it - inner];
  }

  const ModelData& pr_;
  std::unique_ptr<Equations> eq_;
  std::vector<double> zval_;
};

// ----------------------------------------------------------- [fixed part]

Result<ModelData> build_problem(const MixedModelSpec& spec, const std::vector<double>& y) {
  ModelData pr;
  pr.n = spec.n;
  if (static_cast<int>(y.size()) != spec.n) return make_problem("response length differs from the design");
  pr.y = Eigen::Map<const Vec>(y.data(), spec.n);
  pr.y_mean = pr.y.mean();
  pr.y.array() -= pr.y_mean;
  CodedDesign d;
  d.n = spec.n;
  d.factors = spec.factors;
  // Full fixed coding.
  std::vector<Triplet> t;
  for (int i = 0; i < spec.n; ++i) t.emplace_back(i, 0, 1.0);
  int col = 1;
  for (const MixedTerm& term : spec.fixed) {
    pr.term_first.push_back(col);
    pr.fixed_cells.push_back(term_cells(d, term.factors));
    const TermCells& tc = pr.fixed_cells.back();
    for (int i = 0; i < spec.n; ++i) t.emplace_back(i, col + tc.cell_of[i], 1.0);
    col += static_cast<int>(tc.count.size());
  }
  for (const auto& cov : spec.covariates) {
    for (int i = 0; i < spec.n; ++i)
      if (cov[i] != 0) t.emplace_back(i, col, cov[i]);
    ++col;
  }
  pr.full_columns = col;
  if (col > kMaxFixedColumns)
    return make_problem("the fixed part has " + std::to_string(col) + " columns, over the " +
                        std::to_string(kMaxFixedColumns) + " the REML fit holds; take the entries as random");
  SpMat x(spec.n, col);
  x.setFromTriplets(t.begin(), t.end());
  const Mat xtx = Mat(SpMat(x.transpose() * x));
  // Columns in order, each kept when it is not a combination of those kept
  // before it (greedy Cholesky on X'X).
  Mat lsel = Mat::Zero(col, col);
  std::vector<int> sel;
  pr.position.assign(col, -1);
  for (int j = 0; j < col; ++j) {
    const int k = static_cast<int>(sel.size());
    Vec v(k);
    for (int a = 0; a < k; ++a) v[a] = xtx(sel[a], j);
    const Vec l = k ? Vec(lsel.topLeftCorner(k, k).triangularView<Eigen::Lower>().solve(v)) : Vec();
    const double dd = xtx(j, j) - (k ? l.squaredNorm() : 0.0);
    if (xtx(j, j) > 0 && dd > 1e-9 * xtx(j, j)) {
      lsel.row(k).head(k) = l.transpose();
      lsel(k, k) = std::sqrt(dd);
      pr.position[j] = k;
      sel.push_back(j);
    }
  }
  const int p = static_cast<int>(sel.size());
  if (spec.n - p < 1) return make_problem("the design leaves no residual degrees of freedom for the REML fit");
  pr.selected = sel;
  const auto lp = lsel.topLeftCorner(p, p).triangularView<Eigen::Lower>();
  pr.log_det_xtx = 0;
  for (int a = 0; a < p; ++a) pr.log_det_xtx += 2.0 * std::log(lsel(a, a));
  pr.alias = Mat::Zero(p, col);
  for (int j = 0; j < col; ++j) {
    if (pr.position[j] >= 0) { pr.alias(pr.position[j], j) = 1.0; continue; }
    Vec v(p);
    for (int a = 0; a < p; ++a) v[a] = xtx(sel[a], j);
    pr.alias.col(j) = lp.transpose().solve(Vec(lp.solve(v)));
  }
  std::vector<Triplet> ts;
  for (int c = 0; c < x.outerSize(); ++c)
    if (pr.position[c] >= 0)
      for (SpMat::InnerIterator it(x, c); it; ++it) ts.emplace_back(it.row(), pr.position[c], it.value());
  pr.x_sel.resize(spec.n, p);
  pr.x_sel.setFromTriplets(ts.begin(), ts.end());
  // Random part.
  for (const MixedTerm& term : spec.random) {
    TermCells tc = term_cells(d, term.factors);
    const int q = static_cast<int>(tc.count.size());
    if (q < 2) return make_problem("random term '" + term.label + "' has fewer than two levels with a value");
    std::vector<Triplet> tz;
    for (int i = 0; i < spec.n; ++i) tz.emplace_back(i, tc.cell_of[i], 1.0);
    SpMat z(spec.n, q);
    z.setFromTriplets(tz.begin(), tz.end());
    // A random term whose every level is a combination of fixed effects
    // (blocks that coincide with an entry) has no variance of its own to estimate.
    {
      const Mat zx = Mat(SpMat(z.transpose() * pr.x_sel));
      bool free_part = false;
      for (int j = 0; j < q && !free_part; ++j) {
        const Vec l = lp.solve(Vec(zx.row(j).transpose()));
        if (tc.count[j] - l.squaredNorm() > 1e-9 * tc.count[j]) free_part = true;
      }
      if (!free_part)
        return make_problem("'" + term.label + "' coincides with the fixed effects (each of its levels is one "
                            "treatment or combination): its variance cannot be estimated; check the design's columns");
    }
    pr.z.push_back(std::move(z));
    pr.random_cells.push_back(std::move(tc));
  }
  // The variances must be told apart by the error contrasts K (the part of
  // the data the fixed effects leave): REML sees the data only through
  // K'y, with covariance sum_i s_i K'Z_i Z_i'K + s_e I, so the matrices
  // K'Z_i Z_i'K and I must be linearly independent (Searle, Casella &
  // McCulloch 1992, ch. 6, on identifiable variance components). A random
  // term with one plot per level is the plot error over again. The full
  // test is run when the terms' levels are as many as the plots (one plot
  // per block, a lost plot in a 2 x 2), up to a size where it is cheap.
  {
    int columns = p;
    for (size_t k = 0; k < pr.z.size(); ++k) {
      if (pr.z[k].cols() == spec.n)
        return make_problem("'" + spec.random[k].label + "' has one plot per level, so it cannot be told apart from "
                            "the plot error; check the design's columns");
      columns += static_cast<int>(pr.z[k].cols());
    }
    const int e = spec.n - p;
    if (!pr.z.empty() && columns >= spec.n && spec.n <= kMaxPlotsForIdentityCheck) {
      const Mat xd = Mat(pr.x_sel);
      Eigen::HouseholderQR<Mat> qr(xd);
      const Mat q = qr.householderQ() * Mat::Identity(spec.n, spec.n);
      const Mat kc = q.rightCols(e);
      const int nk = static_cast<int>(pr.z.size());
      Mat m(static_cast<Eigen::Index>(e) * e, nk + 1);
      for (int k = 0; k < nk; ++k) {
        const Mat kz = kc.transpose() * Mat(pr.z[k]);
        const Mat s2 = kz * kz.transpose();
        m.col(k) = Eigen::Map<const Vec>(s2.data(), s2.size());
      }
      const Mat id = Mat::Identity(e, e);
      m.col(nk) = Eigen::Map<const Vec>(id.data(), id.size());
      for (int k = 0; k <= nk; ++k) {
        const double norm = m.col(k).norm();
        if (norm > 0) m.col(k) /= norm;
      }
      Eigen::SelfAdjointEigenSolver<Mat> es(Mat(m.transpose() * m));
      if (es.info() == Eigen::Success && es.eigenvalues()[0] < 1e-10 * es.eigenvalues()[nk]) {
        // Name the terms in the dependence (the null direction's large entries).
        std::vector<std::string> names;
        for (int k = 0; k <= nk; ++k)
          if (std::abs(es.eigenvectors()(k, 0)) > 0.2) names.push_back(k < nk ? "'" + spec.random[k].label + "'" : "the plot error");
        return make_problem("these plots cannot tell " + listed(names) + " apart (too few plots are left once the treatments "
                            "are allowed for), so their sizes cannot be estimated; check the design's columns, or use "
                            "the analysis of variance");
      }
    }
  }
  int v = static_cast<int>(pr.z.size());
  if (spec.spatial) {
    const SpatialField& f = *spec.spatial;
    if (f.rows < 2 || f.cols < 2) return make_problem("the field trend needs at least two rows and two columns");
    if (static_cast<int>(f.row.size()) != spec.n || static_cast<int>(f.col.size()) != spec.n)
      return make_problem("the field trend needs a row and a column for every plot");
    pr.spatial = true;
    pr.rows = f.rows;
    pr.cols = f.cols;
    std::vector<Triplet> tz;
    std::vector<char> used(static_cast<size_t>(f.rows) * f.cols, 0);
    for (int i = 0; i < spec.n; ++i) {
      if (f.row[i] < 0 || f.row[i] >= f.rows || f.col[i] < 0 || f.col[i] >= f.cols)
        return make_problem("a plot lies outside the field grid", "", i);
      const int cell = f.col[i] * f.rows + f.row[i];
      if (used[cell]++) return make_problem("two plots share one row and column of the field", "", i);
      tz.emplace_back(i, cell, 1.0);
    }
    pr.z_field.resize(spec.n, f.rows * f.cols);
    pr.z_field.setFromTriplets(tz.begin(), tz.end());
    pr.field_var = v++;
    pr.rho_row = v++;
    pr.rho_col = v++;
  }
  pr.resid = v++;
  pr.n_var = v;
  // A field trend adds three parameters to the random terms' variances and
  // the plot error; with fewer than two error contrasts (plots beyond the
  // fixed effects) for each, the fit chases noise. A rule of this project.
  if (pr.spatial && spec.n - p < 2 * pr.n_var)
    return make_problem("the field trend has " + std::to_string(pr.n_var) + " variances and autocorrelations to estimate "
                        "from " + std::to_string(spec.n - p) + " plots beyond the treatment and fixed effects; it needs at "
                        "least " + std::to_string(2 * pr.n_var) + " (a larger trial)");
  return pr;
}

}  // namespace

// ------------------------------------------------------------------ [fit]

struct MixedFit::Impl {
  ModelData pr;
  std::vector<VarianceParameter> params;
  double loglik = 0;
  int iterations = 0;
  bool converged = false;
  Vec beta;                  // selected coding, with the mean restored
  Mat cov_beta;              // p x p
  std::vector<Mat> dcov;     // per parameter (empty when held)
  Mat param_cov;             // n_var x n_var
  std::vector<std::vector<double>> blups;
  std::vector<double> field, residuals;
  std::vector<std::vector<double>> pev;      // per random term, per cell
  std::vector<double> mean_pev;              // per random term

  Vec reduce(const std::vector<double>& x) const {
    Vec out(pr.selected.size());
    for (size_t a = 0; a < pr.selected.size(); ++a) out[a] = x[pr.selected[a]];
    return out;
  }
};

const std::vector<VarianceParameter>& MixedFit::parameters() const { return impl_->params; }
double MixedFit::log_likelihood() const { return impl_->loglik; }
int MixedFit::iterations() const { return impl_->iterations; }
bool MixedFit::converged() const { return impl_->converged; }
int MixedFit::fixed_rank() const { return static_cast<int>(impl_->pr.selected.size()); }
int MixedFit::observations() const { return impl_->pr.n; }
int MixedFit::fixed_columns() const { return impl_->pr.full_columns; }
int MixedFit::fixed_term_first_column(int term) const { return impl_->pr.term_first[term]; }
const TermCells& MixedFit::fixed_term_cells(int term) const { return impl_->pr.fixed_cells[term]; }
const std::vector<double>& MixedFit::blups(int term) const { return impl_->blups[term]; }
const TermCells& MixedFit::random_term_cells(int term) const { return impl_->pr.random_cells[term]; }
std::vector<double> MixedFit::prediction_error_variance(int term) const { return impl_->pev[term]; }
double MixedFit::mean_difference_pev(int term) const { return impl_->mean_pev[term]; }
const std::vector<double>& MixedFit::field() const { return impl_->field; }
const std::vector<double>& MixedFit::residuals() const { return impl_->residuals; }

bool MixedFit::estimable(const std::vector<double>& x) const {
  const ModelData& pr = impl_->pr;
  const Vec xs = impl_->reduce(x);
  double scale = 1.0;
  for (double v : x) scale += std::abs(v);
  for (int j = 0; j < pr.full_columns; ++j) {
    if (pr.position[j] >= 0) continue;
    if (std::abs(x[j] - pr.alias.col(j).dot(xs)) > 1e-8 * scale) return false;
  }
  return true;
}
double MixedFit::estimate(const std::vector<double>& x) const { return impl_->reduce(x).dot(impl_->beta); }
double MixedFit::variance(const std::vector<double>& x) const {
  const Vec xs = impl_->reduce(x);
  return xs.dot(impl_->cov_beta * xs);
}

namespace {
double satterthwaite(double v, const Vec& g, const Mat& a) {
  const double denom = g.dot(a * g);
  if (!(denom > 0)) return 1e6;
  return std::min(1e6, 2.0 * v * v / denom);
}
}  // namespace

double MixedFit::satterthwaite_df(const std::vector<double>& x) const {
  const Vec xs = impl_->reduce(x);
  const int nv = static_cast<int>(impl_->dcov.size());
  Vec g = Vec::Zero(nv);
  for (int i = 0; i < nv; ++i)
    if (impl_->dcov[i].size()) g[i] = xs.dot(impl_->dcov[i] * xs);
  return satterthwaite(xs.dot(impl_->cov_beta * xs), g, impl_->param_cov);
}

std::vector<double> MixedFit::covariance(const std::vector<std::vector<double>>& rows) const {
  const int k = static_cast<int>(rows.size());
  Mat xs(impl_->pr.selected.size(), k);
  for (int i = 0; i < k; ++i) xs.col(i) = impl_->reduce(rows[i]);
  const Mat m = xs.transpose() * impl_->cov_beta * xs;
  return std::vector<double>(m.data(), m.data() + m.size());
}

std::vector<double> MixedFit::pairwise_df(const std::vector<std::vector<double>>& rows, double* average_df) const {
  const int k = static_cast<int>(rows.size());
  Mat xs(impl_->pr.selected.size(), k);
  for (int i = 0; i < k; ++i) xs.col(i) = impl_->reduce(rows[i]);
  const Mat m = xs.transpose() * impl_->cov_beta * xs;
  const int nv = static_cast<int>(impl_->dcov.size());
  std::vector<Mat> dm(nv);
  for (int v = 0; v < nv; ++v)
    if (impl_->dcov[v].size()) dm[v] = xs.transpose() * impl_->dcov[v] * xs;
  std::vector<double> out(static_cast<size_t>(k) * k, 0.0);
  Vec gsum = Vec::Zero(nv);
  double vsum = 0;
  int pairs = 0;
  for (int i = 0; i < k; ++i)
    for (int j = i + 1; j < k; ++j) {
      Vec g = Vec::Zero(nv);
      for (int v = 0; v < nv; ++v)
        if (dm[v].size()) g[v] = dm[v](i, i) + dm[v](j, j) - 2 * dm[v](i, j);
      const double var = m(i, i) + m(j, j) - 2 * m(i, j);
      out[static_cast<size_t>(i) * k + j] = out[static_cast<size_t>(j) * k + i] =
          satterthwaite(var, g, impl_->param_cov);
      gsum += g;
      vsum += var;
      ++pairs;
    }
  if (average_df) *average_df = pairs ? satterthwaite(vsum / pairs, gsum / pairs, impl_->param_cov) : 0.0;
  return out;
}

WaldTest MixedFit::wald(const std::vector<std::vector<double>>& rows) const {
  WaldTest out;
  for (const auto& r : rows)
    if (!estimable(r)) { out.estimable = false; return out; }
  const int q = static_cast<int>(rows.size());
  const int p = static_cast<int>(impl_->pr.selected.size());
  Mat l(q, p);
  for (int i = 0; i < q; ++i) l.row(i) = impl_->reduce(rows[i]).transpose();
  const Mat m = l * impl_->cov_beta * l.transpose();
  Eigen::SelfAdjointEigenSolver<Mat> eig(m);
  const double top = eig.eigenvalues().maxCoeff();
  const Vec lb = l * impl_->beta;
  const int nv = static_cast<int>(impl_->dcov.size());
  double f = 0, e_sum = 0;
  int rank = 0;
  bool small = false;
  double min_nu = 1e6;
  for (int a = 0; a < q; ++a) {
    const double d = eig.eigenvalues()[a];
    if (!(d > 1e-10 * top)) continue;
    const Vec pa = eig.eigenvectors().col(a);
    const Vec lp = l.transpose() * pa;
    f += std::pow(pa.dot(lb), 2) / d;
    Vec g = Vec::Zero(nv);
    for (int v = 0; v < nv; ++v)
      if (impl_->dcov[v].size()) g[v] = lp.dot(impl_->dcov[v] * lp);
    const double nu = satterthwaite(d, g, impl_->param_cov);
    min_nu = std::min(min_nu, nu);
    if (nu > 2) e_sum += nu / (nu - 2); else small = true;
    ++rank;
  }
  if (rank == 0) { out.estimable = false; return out; }
  out.num_df = rank;
  out.f = f / rank;
  out.den_df = (!small && e_sum > rank) ? 2.0 * e_sum / (e_sum - rank) : min_nu;
  out.p = f_upper_tail(out.f, out.num_df, out.den_df);
  return out;
}

Result<MixedFit> fit_reml(const MixedModelSpec& spec, const std::vector<double>& y, const RemlOptions& options) {
  auto built = build_problem(spec, y);
  if (!built) return built.problem();
  auto impl = std::make_shared<MixedFit::Impl>();
  impl->pr = std::move(built).value();
  const ModelData& pr = impl->pr;
  Engine engine(pr);
  const int nv = pr.n_var;
  const int nt = engine.terms();
  auto is_variance = [&](int v) { return v != pr.rho_row && v != pr.rho_col; };

  // The fixed effects alone: the values must vary around them (beyond
  // rounding), or there is no variance to estimate.
  const Vec xty = pr.x_sel.transpose() * pr.y;
  const Mat xtx = Mat(SpMat(pr.x_sel.transpose() * pr.x_sel));
  const Vec b = xtx.ldlt().solve(xty);
  const double rss = std::max(0.0, pr.y.squaredNorm() - b.dot(xty));
  const double magnitude = std::max(std::abs(pr.y_mean), pr.y.cwiseAbs().maxCoeff());
  if (!(rss > std::pow(1e-12 * magnitude, 2) * pr.n) || !(rss > 0))
    return make_problem("the values do not vary around the treatment means (every plot of a treatment has the same "
                        "value); there is no plot-to-plot variation to estimate");
  // Starting values: the fixed-effects-only residual variance shared out.
  std::vector<double> th(nv, 0.0);
  if (!options.start.empty() && static_cast<int>(options.start.size()) == nv) {
    th = options.start;
  } else {
    const double s2 = rss / std::max(1, pr.n - static_cast<int>(b.size()));
    const int nvar = nt + 1;
    for (int v = 0; v < nv; ++v) th[v] = is_variance(v) ? s2 / nvar : 0.3;
  }
  std::vector<char> active(nt, 1);
  for (int k = 0; k < nt; ++k) active[k] = th[engine.var_of_term(k)] > 0;
  engine.set_active(active);
  Evaluation ev = engine.evaluate(th, true);
  if (!ev.ok) return make_problem("the REML fit could not start: the mixed-model equations are singular");

  // The plot error beside a field can shrink to nothing (the field then
  // carries all the variation): it is held at a floor, a millionth of the
  // total variance, where the mixed-model equations stay defined.
  // An autocorrelation that reaches +-0.995 is held there the same way.
  std::vector<char> held(nv, 0);
  auto variance_total = [&](const std::vector<double>& t) {
    double total = 0;
    for (int v = 0; v < nv; ++v)
      if (is_variance(v)) total += t[v];
    return total;
  };
  auto resid_floor = [&](const std::vector<double>& t) { return 1e-6 * variance_total(t); };
  // The parameters' names, as the fit reports them.
  auto param_label = [&](int v) -> std::string {
    if (v < static_cast<int>(spec.random.size())) return spec.random[v].label;
    if (v == pr.resid) return "residual";
    const std::string& field = spec.spatial->label;
    if (v == pr.rho_row) return field + ": row autocorrelation";
    if (v == pr.rho_col) return field + ": column autocorrelation";
    return field + ": variance";
  };
  auto free_params = [&](const std::vector<char>& act) {
    std::vector<int> f;
    for (int v = 0; v < nv; ++v) {
      bool is_held = held[v] != 0;
      for (int k = 0; k < nt; ++k)
        if (!act[k] && (v == engine.var_of_term(k) || (k == nt - 1 && pr.spatial && (v == pr.rho_row || v == pr.rho_col))))
          is_held = true;
      if (!is_held) f.push_back(v);
    }
    return f;
  };

  const bool trace = std::getenv("FURROW_REML_TRACE") != nullptr;   // every iteration on stderr
  int it = 0;
  bool converged = false;
  // The last accepted move, kept to spot slow (linear) convergence, and
  // iterations since the last extrapolated jump.
  std::vector<double> last_move;
  int since_jump = 0;
  for (; it < options.max_iterations; ++it) {
    const std::vector<int> fr = free_params(active);
    const int nf = static_cast<int>(fr.size());
    Mat a(nf, nf);
    Vec g(nf);
    for (int i = 0; i < nf; ++i) {
      g[i] = ev.score[fr[i]];
      for (int j = 0; j < nf; ++j) a(i, j) = ev.ai(fr[i], fr[j]);
    }
    // The step A^-1 g, by eigenvalues: directions the data cannot inform
    // (two random terms that the likelihood cannot tell apart make A
    // singular) are left out rather than turned into a zero or wild step.
    Vec delta = Vec::Zero(nf);
    if (nf > 0) {
      Eigen::SelfAdjointEigenSolver<Mat> es(a);
      if (es.info() == Eigen::Success) {
        const Vec& lam = es.eigenvalues();
        const double top = lam.cwiseAbs().maxCoeff();
        for (int i = 0; i < nf; ++i)
          if (lam[i] > 1e-12 * top) delta += es.eigenvectors().col(i) * (es.eigenvectors().col(i).dot(g) / lam[i]);
      }
      if (!delta.allFinite()) delta = Vec::Zero(nf);
    }
    bool accepted = false;
    std::vector<double> tn;
    std::vector<char> an;
    std::vector<char> rh = held;
    Evaluation en;
    // The step is first shortened so that no variance falls by more than
    // 90 % at once; a variance already under a ten-thousandth of the total
    // may go to its bound (zero, or the plot error's floor). Jumping to the
    // bound from far away would strand the fit at a boundary point that is
    // not the maximum.
    double step = 1.0;
    {
      const double total = variance_total(th);
      for (int i = 0; i < nf; ++i) {
        const int v = fr[i];
        if (is_variance(v) && delta[i] < 0 && th[v] > 1e-4 * total)
          step = std::min(step, 0.9 * th[v] / -delta[i]);
      }
    }
    for (int h = 0; h < 14 && delta.size(); ++h, step *= 0.5) {
      tn = th;
      an = active;
      rh = held;
      for (int i = 0; i < nf; ++i) {
        const int v = fr[i];
        double val = th[v] + step * delta[i];
        if (is_variance(v)) {
          if (!(val > th[v] * 1e-8) && v != pr.resid) val = 0.0;
          if (v == pr.resid && !(val > resid_floor(th))) { val = resid_floor(th); rh[v] = 1; }
        } else {
          if (std::abs(val) >= kMaxCorrelation) { val = std::copysign(kMaxCorrelation, val); rh[v] = 1; }
        }
        tn[v] = val;
      }
      for (int k = 0; k < nt; ++k)
        if (an[k] && tn[engine.var_of_term(k)] <= 0) an[k] = 0;
      engine.set_active(an);
      en = engine.evaluate(tn, true);
      if (en.ok && en.loglik >= ev.loglik - 1e-12 * std::abs(ev.loglik)) { accepted = true; break; }
    }
    // A full step that overshoots (the average information leaves out the
    // second derivatives of V, which the autocorrelations have) is cut back
    // to where the slope along it vanishes (secant on the two slopes).
    if (accepted && step == 1.0 && rh == held && en.score.size()) {
      const double s0 = g.dot(delta);
      double s1 = 0;
      for (int i = 0; i < nf; ++i) s1 += en.score[fr[i]] * delta[i];
      if (s0 > 0 && s1 < 0) {
        const double t = s0 / (s0 - s1);
        if (t > 0.05 && t < 0.9) {
          std::vector<double> tt = th;
          for (int i = 0; i < nf; ++i) tt[fr[i]] = th[fr[i]] + t * delta[i];
          bool inside = true;
          for (int i = 0; i < nf; ++i)
            if (is_variance(fr[i]) ? !(tt[fr[i]] > 0) : std::abs(tt[fr[i]]) > kMaxCorrelation) inside = false;
          if (inside && tn != tt) {
            engine.set_active(active);
            Evaluation et = engine.evaluate(tt, true);
            if (et.ok && et.loglik >= en.loglik - 1e-12 * std::abs(en.loglik)) { tn = tt; an = active; rh = held; en = std::move(et); step = t; }
            else engine.set_active(an);
          }
        }
      }
    }
    if (!accepted && delta.size()) {
      // Every shortened step crossed a bound: a variance close to its bound
      // (under a ten-thousandth of the total) whose score points past it is
      // put on the bound and held there; the others move from there on the
      // next step. (Otherwise the fit would stall with the autocorrelations'
      // scores far from zero: the EM step below does not move them.)
      const double total = variance_total(th);
      tn = th;
      an = active;
      rh = held;
      bool moved = false;
      for (int i = 0; i < nf; ++i) {
        const int v = fr[i];
        if (!is_variance(v) || !(th[v] < 1e-4 * total) || !(g[i] < 0)) continue;
        if (v == pr.resid) {
          tn[v] = resid_floor(th);
          rh[v] = 1;
        } else {
          tn[v] = 0.0;
        }
        moved = true;
      }
      if (moved) {
        for (int k = 0; k < nt; ++k)
          if (an[k] && tn[engine.var_of_term(k)] <= 0) an[k] = 0;
        engine.set_active(an);
        en = engine.evaluate(tn, true);
        if (en.ok && en.loglik >= ev.loglik - 1e-12 * std::abs(ev.loglik)) accepted = true;
        else engine.set_active(active);
      }
    }
    if (!accepted) {
      // EM-REML step: always a non-decreasing likelihood.
      tn = th;
      an = active;
      engine.set_active(active);
      ev = engine.evaluate(th, true);
      for (int k = 0; k < nt; ++k) {
        if (!active[k]) continue;
        const int v = engine.var_of_term(k);
        const int off = engine.equations().offset[k];
        const int q = k < static_cast<int>(pr.z.size()) ? static_cast<int>(pr.z[k].cols()) : pr.rows * pr.cols;
        const Vec u = ev.s.segment(off, q);
        double uku = u.squaredNorm();
        if (k == static_cast<int>(pr.z.size()))
          uku = u.dot(field_inverse(pr.rows, pr.cols, th[pr.rho_row], th[pr.rho_col], 0) * u);
        tn[v] = (uku + ev.trace_k[k]) / q;
      }
      if (!held[pr.resid])
        tn[pr.resid] = (pr.y.squaredNorm() - ev.s.dot(engine.equations().wty)) / (pr.n - engine.equations().p);
      rh = held;
      en = engine.evaluate(tn, true);
      if (!en.ok || en.loglik < ev.loglik - 1e-12 * std::abs(ev.loglik)) {
        engine.set_active(active);
        ev = engine.evaluate(th, true);
        converged = true;   // no step improves the likelihood: numerically at the maximum
        break;
      }
    }
    // Slow convergence (the average information can be far from the observed
    // information, near an autocorrelation's limit) shows as moves in one
    // direction that shrink by a steady ratio r; their remaining sum
    // r / (1 - r) times the last move is tried at once (Aitken's
    // extrapolation), and kept only if the likelihood is higher there.
    ++since_jump;
    bool jumped = false;
    if (accepted && an == active && rh == held) {
      std::vector<double> move(nv);
      for (int v = 0; v < nv; ++v) move[v] = tn[v] - th[v];
      if (!last_move.empty() && since_jump >= 3) {
        double dot = 0, n0 = 0, n1 = 0;
        for (int v = 0; v < nv; ++v) {
          dot += move[v] * last_move[v];
          n0 += last_move[v] * last_move[v];
          n1 += move[v] * move[v];
        }
        const double r = std::sqrt(n1 / n0);
        if (n0 > 0 && n1 > 0 && dot > 0.99 * std::sqrt(n0 * n1) && r > 0.5 && r < 0.95) {
          std::vector<double> tj = tn;
          bool inside = true;
          for (int v = 0; v < nv; ++v) {
            if (move[v] == 0) continue;   // held at a bound, or not in the model
            tj[v] += move[v] * r / (1 - r);
            if (is_variance(v) ? !(tj[v] > (v == pr.resid ? resid_floor(th) : 0.0)) : std::abs(tj[v]) >= kMaxCorrelation)
              inside = false;
          }
          if (inside) {
            Evaluation ej = engine.evaluate(tj, true);
            if (ej.ok && ej.loglik > en.loglik) {
              tn = std::move(tj);
              en = std::move(ej);
              since_jump = 0;
              jumped = true;
            } else {
              engine.set_active(an);
            }
          }
        }
      }
      last_move = jumped ? std::vector<double>() : std::move(move);
    } else {
      last_move.clear();
    }
    if (trace) {
      if (jumped) std::fprintf(stderr, "(extrapolated) ");
      std::fprintf(stderr, "it %d ll %.12f accepted %d step %g:", it, en.loglik, accepted ? 1 : 0, step);
      for (int v = 0; v < nv; ++v) std::fprintf(stderr, " %.9g(g %.3g)", tn[v], en.score.size() ? en.score[v] : 0.0);
      std::fprintf(stderr, "\n");
    }
    double change = 0;
    for (int v = 0; v < nv; ++v) change = std::max(change, std::abs(tn[v] - th[v]) / std::max(std::abs(th[v]), 1e-8));
    const double gain = en.loglik - ev.loglik;
    th = tn;
    active = an;
    held = rh;
    ev = std::move(en);
    // The log-likelihood of tens of thousands of plots carries rounding of
    // about 1e-13 of its size; a gain below that is no gain.
    const double gain_tolerance = std::max(options.loglik_tolerance, 1e-12 * std::abs(ev.loglik));
    if (std::abs(gain) < gain_tolerance && change < options.parameter_tolerance) {
      // A variance held at zero comes back when its score there is positive.
      bool released = false;
      for (int v = 0; v < nv; ++v) {
        if (!held[v]) continue;
        const bool inward = v == pr.resid ? ev.score[v] > 0 : ev.score[v] * th[v] < 0;
        if (inward) { held[v] = 0; released = true; }
      }
      for (int k = 0; k < nt; ++k) {
        if (active[k]) continue;
        std::vector<double> tt = th;
        std::vector<char> at = active;
        tt[engine.var_of_term(k)] = th[pr.resid] * 1e-6;
        at[k] = 1;
        engine.set_active(at);
        const Evaluation probe = engine.evaluate(tt, true);
        if (probe.ok && probe.score[engine.var_of_term(k)] > 0) {
          th = tt;
          active = at;
          ev = probe;
          released = true;
          break;
        }
      }
      engine.set_active(active);
      if (!released) { converged = true; break; }
      ev = engine.evaluate(th, true);
    }
  }
  if (!pr.spatial && (held[pr.resid] || th[pr.resid] < 1e3 * resid_floor(th)))
    return make_problem("the plots fit the design exactly (no plot-to-plot variation is left once blocks and "
                        "treatments are allowed for); there is no plot error to estimate");
  engine.set_active(active);
  ev = engine.evaluate(th, true);
  impl->loglik = ev.loglik;
  impl->iterations = it + 1;
  impl->converged = converged;

  // Parameters and their covariance (inverse average information over the free ones).
  const std::vector<int> fr = free_params(active);
  const int nf = static_cast<int>(fr.size());
  Mat a(nf, nf);
  for (int i = 0; i < nf; ++i)
    for (int j = 0; j < nf; ++j) a(i, j) = ev.ai(fr[i], fr[j]);
  // Parameters the likelihood cannot tell apart: the information, scaled to
  // relative changes of each variance, has a (near) null direction. The
  // estimates along it are arbitrary, so the fit is refused in words.
  if (nf > 1) {
    Mat scaled = a;
    for (int i = 0; i < nf; ++i)
      for (int j = 0; j < nf; ++j)
        scaled(i, j) *= (is_variance(fr[i]) ? th[fr[i]] : 1.0) * (is_variance(fr[j]) ? th[fr[j]] : 1.0);
    Eigen::SelfAdjointEigenSolver<Mat> es(scaled);
    if (es.info() == Eigen::Success && es.eigenvalues()[0] < 1e-9 * es.eigenvalues()[nf - 1]) {
      std::vector<std::string> names;
      for (int i = 0; i < nf; ++i)
        if (std::abs(es.eigenvectors()(i, 0)) > 0.2)
          names.push_back(fr[i] == pr.resid ? "the plot error" : "'" + param_label(fr[i]) + "'");
      return make_problem("these data cannot tell " + listed(names) + " apart (the likelihood is flat along a mix of them), so "
                          "their sizes cannot be estimated; check the design's columns, or use the analysis of variance");
    }
  }
  const Mat ainv = a.ldlt().solve(Mat::Identity(nf, nf));
  impl->param_cov = Mat::Zero(nv, nv);
  for (int i = 0; i < nf; ++i)
    for (int j = 0; j < nf; ++j) impl->param_cov(fr[i], fr[j]) = ainv(i, j);
  for (int k = 0; k < static_cast<int>(spec.random.size()); ++k)
    impl->params.push_back({param_label(k), ParameterKind::variance, th[k], 0, !active[k]});
  if (pr.spatial) {
    impl->params.push_back({param_label(pr.field_var), ParameterKind::variance, th[pr.field_var], 0, !active[nt - 1]});
    impl->params.push_back({param_label(pr.rho_row), ParameterKind::autocorrelation, th[pr.rho_row], 0,
                             held[pr.rho_row] != 0 || std::abs(th[pr.rho_row]) >= kMaxCorrelation - 1e-12});
    impl->params.push_back({param_label(pr.rho_col), ParameterKind::autocorrelation, th[pr.rho_col], 0,
                             held[pr.rho_col] != 0 || std::abs(th[pr.rho_col]) >= kMaxCorrelation - 1e-12});
  }
  impl->params.push_back({param_label(pr.resid), ParameterKind::residual_variance, th[pr.resid], 0, held[pr.resid] != 0});
  for (int v = 0; v < nv; ++v)
    impl->params[v].se = impl->params[v].at_bound ? 0.0 : std::sqrt(std::max(0.0, impl->param_cov(v, v)));

  // Fixed effects and the derivatives of their covariance.
  const Equations& eq = engine.equations();
  const int p = eq.p;
  const double se = th[pr.resid];
  impl->beta = ev.s.head(p);
  impl->beta[0] += pr.y_mean;
  std::vector<int> fixed_idx(p);
  std::iota(fixed_idx.begin(), fixed_idx.end(), 0);
  const Mat sc = engine.inverse_columns(fixed_idx) * se;   // columns of C^-1 for the fixed effects
  impl->cov_beta = sc.topRows(p);
  impl->dcov.assign(nv, Mat());
  Mat euler = impl->cov_beta;
  for (int k = 0; k < nt; ++k) {
    if (!active[k]) continue;
    const int off = eq.offset[k];
    const int v = engine.var_of_term(k);
    const double sk = th[v];
    if (k < static_cast<int>(pr.z.size())) {
      const auto cu = sc.middleRows(off, pr.z[k].cols());
      impl->dcov[v] = cu.transpose() * cu / (sk * sk);
    } else {
      const int q = pr.rows * pr.cols;
      const Mat cu = sc.middleRows(off, q);
      const SpMat kinv = field_inverse(pr.rows, pr.cols, th[pr.rho_row], th[pr.rho_col], 0);
      impl->dcov[v] = cu.transpose() * (kinv * cu) / (sk * sk);
      const SpMat dr = field_inverse(pr.rows, pr.cols, th[pr.rho_row], th[pr.rho_col], 1);
      const SpMat dc = field_inverse(pr.rows, pr.cols, th[pr.rho_row], th[pr.rho_col], 2);
      impl->dcov[pr.rho_row] = -(cu.transpose() * (dr * cu)) / sk;
      impl->dcov[pr.rho_col] = -(cu.transpose() * (dc * cu)) / sk;
    }
    euler -= sk * impl->dcov[v];
  }
  impl->dcov[pr.resid] = euler / se;

  // Predictions of the random effects.
  for (int k = 0; k < static_cast<int>(pr.z.size()); ++k) {
    const int q = static_cast<int>(pr.z[k].cols());
    std::vector<double> u(q, 0.0), pev(q, th[k]);
    double mean_pev = 2.0 * th[k];
    if (active[k]) {
      const int off = eq.offset[k];
      Vec ones = Vec::Zero(eq.m);
      double tr = 0;
      for (int i = 0; i < q; ++i) {
        u[i] = ev.s[off + i];
        pev[i] = se * engine.diag_inverse(off + i);
        tr += pev[i];
        ones[off + i] = 1.0;
      }
      const double sum_all = se * ones.dot(engine.solve(ones));
      mean_pev = 2.0 / (q - 1) * (tr - sum_all / q);
    }
    impl->blups.push_back(std::move(u));
    impl->pev.push_back(std::move(pev));
    impl->mean_pev.push_back(mean_pev);
  }
  if (pr.spatial) {
    impl->field.assign(static_cast<size_t>(pr.rows) * pr.cols, 0.0);
    if (active[nt - 1])
      for (int i = 0; i < pr.rows * pr.cols; ++i) impl->field[i] = ev.s[eq.offset[nt - 1] + i];
  }
  const Vec e = pr.y - eq.w * ev.s;
  impl->residuals.assign(e.data(), e.data() + e.size());
  return MixedFit(std::move(impl));
}

}  // namespace furrow
