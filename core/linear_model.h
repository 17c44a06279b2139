#pragma once
// The fitting engine: a linear model with factor terms, fitted once per
// pattern of missing plots and then applied to any number of responses.
//
// Every term is a crossing of one or more factors (its "cells"); the model
// always contains an intercept. Sums of squares come from projections onto
// orthonormal bases (QR with column pivoting), never from differences of raw
// sums of squares, so that data close to a constant keep their digits.
//
// Three ways to fit, chosen automatically and all exact in exact arithmetic:
//   balanced  - orthogonal designs (proportional cell counts between every
//               pair of terms, equal counts within each term): sweeps of
//               cell means, O(n * terms).
//   absorbed  - one main-effect factor that no other term contains (entries
//               of an RCBD, CRD or Latin square) is absorbed: the other terms
//               are fitted within its levels, O(n * p_rest^2).
//   cells     - designs whose dense system would be large (many-level
//               crossed or nested terms: site x entry, rate x variety): each
//               model of a sum-of-squares sequence is fitted by absorbing
//               its largest term (cell means, never its indicator columns)
//               and an orthonormal basis of the few other columns within
//               those cells; a step's sum of squares is the squared norm of
//               the difference of the two models' projections of y.
//               O(n * (models) * p_rest^2), p_rest the columns of the small
//               terms (blocks); the least-squares means use the cells of the
//               largest term that contains every means term.
//   dense     - everything else: pivoted QR of the indicator columns.
// The header carries no Eigen types: only linear_model.cpp includes Eigen.

#include <memory>
#include <string>
#include <vector>

#include "core/result.h"

namespace furrow {

// A factor coded 0..levels-1 for each observation (no missing codes).
struct CodedFactor {
  std::vector<int> codes;
  int levels = 0;
};

struct CodedDesign {
  int n = 0;
  std::vector<CodedFactor> factors;
  // Model terms in fitting order, marginal terms first; each is an ascending
  // list of factor indices. Hierarchical: every lower-order term a term needs
  // is present earlier (or is the intercept).
  std::vector<std::vector<int>> terms;
  // Terms whose cell means (least-squares means) are wanted.
  std::vector<int> means_terms;
  // Reference grid for least-squares means: groups of factors whose observed
  // combinations are averaged over with equal weight (a nested pair such as
  // block-within-site is one group; other factors are groups of one).
  std::vector<std::vector<int>> grid_groups;
};

enum class FitMethod { automatic, balanced, absorbed, cells, dense };
const char* fit_method_name(FitMethod method);

struct TermSums {
  double df_sequential = 0, ss_sequential = 0;
  double df_partial = 0, ss_partial = 0;
};

// Least-squares means of one term's observed cells. Var(mean_i) / sigma^2 =
// var_factor[i]; Var(mean_i - mean_j) / sigma^2 = v[i] + v[j] + |a_i - a_j|^2
// with a_i = a[i * a_width .. (i+1) * a_width).
struct CellMeans {
  int term = -1;
  std::vector<std::vector<int>> cell_levels;   // per cell, level code per factor of the term
  std::vector<int> n;                          // observations per cell
  std::vector<double> raw_mean;                // plain average (centred scale)
  std::vector<double> mean;                    // least-squares mean (centred scale)
  std::vector<char> estimable;
  std::vector<double> var_factor;
  std::vector<double> v;
  std::vector<double> a;
  int a_width = 0;

  // Var(mean_i - mean_j) / sigma^2. Precondition: both estimable.
  double difference_var_factor(int i, int j) const;
};

struct ResponseFit {
  std::vector<TermSums> terms;   // one per CodedDesign::terms entry
  double residual_ss = 0, residual_df = 0;
  double total_ss = 0;           // corrected for the mean
  double mean = 0;               // mean of y (centred scale)
  std::vector<double> residuals, fitted, leverages;
  std::vector<CellMeans> means;  // one per CodedDesign::means_terms entry
};

class LinearModel {
 public:
  // Factorises the design. Fails with a plain message when the model leaves
  // no degrees of freedom for error. `forced` other than automatic selects a
  // method (used by tests to compare methods); a forced method that does not
  // apply to the design fails.
  static Result<LinearModel> build(const CodedDesign& design, FitMethod forced = FitMethod::automatic);

  // Fits one response (same length and order as the design's codes; values
  // already centred). Thread-compatible: const and reusable.
  ResponseFit fit(const std::vector<double>& y) const;

  FitMethod method() const;
  double residual_df() const;
  const CodedDesign& design() const;

  struct Impl;

 private:
  explicit LinearModel(std::shared_ptr<const Impl> impl) : impl_(std::move(impl)) {}
  std::shared_ptr<const Impl> impl_;
};

// Cells of a term: compact cell id per observation and each cell's level codes.
struct TermCells {
  std::vector<int> cell_of;                 // per observation
  std::vector<std::vector<int>> levels;     // per cell
  std::vector<int> count;                   // per cell
};
TermCells term_cells(const CodedDesign& design, const std::vector<int>& factors);

}  // namespace furrow
