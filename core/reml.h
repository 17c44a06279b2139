#pragma once
// Linear mixed models fitted by residual maximum likelihood (REML).
//
//   y = X b + sum_k Z_k u_k + e,   u_k ~ N(0, s2_k K_k),   e ~ N(0, s2_e I)
//
// Fixed terms are crossings of factors (plus numeric covariates such as a
// linear row trend); each random term is either independent effects for the
// observed cells of a crossing of factors (K = I) or a field over a grid of
// rows and columns with separable first-order autoregressive correlation,
// K = AR1(rho_col) (x) AR1(rho_row), whose inverse is sparse. The field plus
// the independent plot error is the "AR1 x AR1 + measurement error" model of
// Gilmour, Cullis & Verbyla (1997), J. Agric. Biol. Env. Stat. 2, 269-293.
//
// Methods, each from its published source:
//  - Estimation: average-information REML (Gilmour, Thompson & Cullis 1995,
//    Biometrics 51, 1440-1450): Newton steps with the average of observed and
//    expected information, computed from "working variates" solved through
//    the mixed-model equations (Henderson 1950/1975). Step halving when the
//    likelihood falls; an EM-REML step (Searle, Casella & McCulloch 1992,
//    ch. 6) when halving fails; a variance that reaches zero is held at zero
//    and released when its score turns positive.
//  - Sparse algebra: the mixed-model equations are factorised by Eigen's
//    simplicial Cholesky with AMD ordering; the elements of the inverse
//    needed for the scores (traces over each random term) come from the
//    Takahashi recursions on the factor's pattern (Takahashi, Fagan & Chen
//    1973; Erisman & Tinney 1975, Comm. ACM 18, 177-179), never a dense
//    inverse.
//  - Log-likelihood: Harville's (1977, JASA 72, 320-338) form, invariant to
//    the basis of X: -1/2 [(n-p) log 2 pi + log|V| + log|X'V^-1 X| - log|X'X|
//    + y'P y], evaluated as log|R| + log|G| + log|C| from the equations.
//  - Fixed-effect tests: Wald F with Satterthwaite denominator degrees of
//    freedom for multi-degree-of-freedom hypotheses (Fai & Cornelius 1996,
//    J. Statist. Comput. Simul. 54, 363-378), the covariance of the variance
//    parameters taken as the inverse average information. Derivatives of
//    Var(b) with respect to every parameter, the autocorrelations included,
//    follow from the equations' inverse (for the residual variance, from
//    Var(b) being homogeneous of degree one in the variances).
//
// The header carries no Eigen types: only reml.cpp includes Eigen.

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/linear_model.h"
#include "core/result.h"

namespace furrow {

struct MixedTerm {
  std::string label;
  std::vector<int> factors;   // indices into MixedModelSpec::factors; a crossing of them
};

// A field over a rows x cols grid; each observation sits on one grid cell
// (0-based row and column). Cells without an observation are part of the
// field all the same (a missing plot is simply not observed).
struct SpatialField {
  std::string label = "field trend";
  int rows = 0, cols = 0;
  std::vector<int> row, col;   // per observation
};

struct MixedModelSpec {
  int n = 0;
  std::vector<CodedFactor> factors;
  std::vector<MixedTerm> fixed;              // the intercept is always in the model
  std::vector<std::string> covariate_labels; // numeric fixed columns
  std::vector<std::vector<double>> covariates;
  std::vector<MixedTerm> random;             // independent effects per observed cell
  std::optional<SpatialField> spatial;
};

enum class ParameterKind { variance, residual_variance, autocorrelation };

struct VarianceParameter {
  std::string label;
  ParameterKind kind = ParameterKind::variance;
  double value = 0;
  double se = 0;              // from the inverse average information; 0 when held at a bound
  bool at_bound = false;      // a variance held at zero
};

struct RemlOptions {
  int max_iterations = 200;
  // Stop when the likelihood changes by less than this (or by less than
  // 1e-12 of its size, its own rounding on large trials) and no parameter
  // moves by more than its relative tolerance.
  double loglik_tolerance = 1e-10;
  double parameter_tolerance = 1e-8;
  // Starting values (same order as the fit's parameters); empty = automatic.
  std::vector<double> start;
};

struct WaldTest {
  double num_df = 0, den_df = 0, f = 0, p = 0;
  bool estimable = true;
};

class MixedFit {
 public:
  // Parameters in order: one variance per random term (spec order), then the
  // field's variance, row and column autocorrelations (if any), then the
  // residual variance.
  const std::vector<VarianceParameter>& parameters() const;
  double log_likelihood() const;       // REML, Harville's form with all constants
  int iterations() const;
  bool converged() const;
  int fixed_rank() const;              // p: rank of X
  int observations() const;

  // Fixed-effect columns in the full (unreduced) coding: the intercept, one
  // column per observed cell of each fixed term (in term order, cells in
  // order of first appearance, see term_cells), then the covariates.
  int fixed_columns() const;
  int fixed_term_first_column(int term) const;   // term index into spec.fixed
  const TermCells& fixed_term_cells(int term) const;

  // For a row x of the full coding: whether x'b is estimable, its estimate,
  // its variance, the derivatives of the variance with respect to each
  // parameter, and its Satterthwaite degrees of freedom.
  bool estimable(const std::vector<double>& x) const;
  double estimate(const std::vector<double>& x) const;
  double variance(const std::vector<double>& x) const;
  double satterthwaite_df(const std::vector<double>& x) const;
  // Covariances among several rows (k x k, row-major) and the Satterthwaite
  // degrees of freedom of each pairwise difference's variance, and of the
  // average difference (returned in *average_df).
  std::vector<double> covariance(const std::vector<std::vector<double>>& rows) const;
  std::vector<double> pairwise_df(const std::vector<std::vector<double>>& rows, double* average_df) const;
  // Wald F test that every row of L is zero (rows need not be independent).
  WaldTest wald(const std::vector<std::vector<double>>& L) const;

  // Best linear unbiased predictions of random term k (spec.random order),
  // per observed cell (term_cells order), their prediction error variances
  // and the mean prediction error variance of a difference of two of them.
  const std::vector<double>& blups(int term) const;
  const TermCells& random_term_cells(int term) const;
  std::vector<double> prediction_error_variance(int term) const;
  double mean_difference_pev(int term) const;
  // The fitted field per grid cell (column-major: cell = col * rows + row).
  const std::vector<double>& field() const;
  // Conditional residuals y - X b - Z u, per observation.
  const std::vector<double>& residuals() const;

  struct Impl;
  explicit MixedFit(std::shared_ptr<const Impl> impl) : impl_(std::move(impl)) {}

 private:
  std::shared_ptr<const Impl> impl_;
};

// Fits the model to y (length spec.n). Fails with a plain message when the
// design leaves no residual degrees of freedom, a random term has fewer than
// two observed cells, the grid is inconsistent, or the fixed part is too
// large to hold densely (over 3,000 columns).
Result<MixedFit> fit_reml(const MixedModelSpec& spec, const std::vector<double>& y, const RemlOptions& options = {});

}  // namespace furrow
