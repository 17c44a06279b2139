// The selected inverse against the whole inverse from Eigen's dense Cholesky
// (a general-purpose library): every element on the factor's pattern agrees.
#include "core/selected_inverse.h"

#include <doctest/doctest.h>

#include <Eigen/Dense>
#include <Eigen/OrderingMethods>
#include <Eigen/SparseCholesky>
#include <cmath>
#include <vector>

#include "core/random_stream.h"

namespace furrow {
namespace {

using SpMat = Eigen::SparseMatrix<double>;
using Triplet = Eigen::Triplet<double>;

double uniform(RandomStream& rng) { return static_cast<double>(rng.next() >> 11) * 0x1.0p-53; }

// Largest |Z(i,j) - inverse(i,j)| over L's pattern, relative to the largest
// element of the inverse; also counts the elements compared.
double worst_error(const SpMat& a, bool amd, long* compared) {
  Eigen::PermutationMatrix<Eigen::Dynamic, Eigen::Dynamic, int> perm(a.rows());
  perm.setIdentity();
  if (amd) {
    Eigen::AMDOrdering<int> order;
    Eigen::PermutationMatrix<Eigen::Dynamic, Eigen::Dynamic, int> pinv;
    order(a, pinv);
    perm = pinv.inverse();
  }
  SpMat pa(a.rows(), a.cols());
  pa = a.selfadjointView<Eigen::Lower>().twistedBy(perm);
  Eigen::SimplicialLLT<SpMat, Eigen::Lower, Eigen::NaturalOrdering<int>> chol(pa);
  REQUIRE(chol.info() == Eigen::Success);
  const SpMat& l = chol.matrixL().nestedExpression();
  const std::vector<double> z = selected_inverse(l);
  const Eigen::MatrixXd dense = Eigen::MatrixXd(pa);
  const Eigen::MatrixXd inv = dense.llt().solve(Eigen::MatrixXd::Identity(a.rows(), a.cols()));
  const double scale = inv.cwiseAbs().maxCoeff();
  double worst = 0;
  *compared = 0;
  for (int j = 0; j < l.outerSize(); ++j)
    for (SpMat::InnerIterator it(l, j); it; ++it) {
      worst = std::max(worst, std::abs(z[static_cast<size_t>(&it.value() - l.valuePtr())] - inv(it.row(), j)) / scale);
      ++*compared;
    }
  return worst;
}

// A rows x cols grid with nearest-neighbour couplings (a field), then
// `fixed` columns each touching `touch` random grid cells, last.
SpMat field_like(int rows, int cols, int fixed, int touch, RandomStream& rng) {
  const int g = rows * cols, m = g + fixed;
  std::vector<Triplet> t;
  auto couple = [&](int i, int j, double v) {
    t.emplace_back(i, i, std::abs(v) + 0.05);
    t.emplace_back(j, j, std::abs(v) + 0.05);
    t.emplace_back(std::max(i, j), std::min(i, j), -v);
  };
  for (int r = 0; r < rows; ++r)
    for (int c = 0; c < cols; ++c) {
      const int i = r * cols + c;
      if (c + 1 < cols) couple(i, i + 1, 0.5 + uniform(rng));
      if (r + 1 < rows) couple(i, i + cols, 0.5 + uniform(rng));
      if (r + 1 < rows && c + 1 < cols) couple(i, i + cols + 1, 0.2 * uniform(rng));
    }
  for (int f = 0; f < fixed; ++f)
    for (int k = 0; k < touch; ++k) couple(g + f, static_cast<int>(rng.below(static_cast<std::uint64_t>(g))), 0.3 + uniform(rng));
  SpMat a(m, m);
  a.setFromTriplets(t.begin(), t.end());
  return a;
}

TEST_CASE("selected inverse: a diagonal matrix (every column its own supernode, nothing below)") {
  SpMat a(5, 5);
  std::vector<Triplet> t;
  for (int i = 0; i < 5; ++i) t.emplace_back(i, i, 1.0 + i);
  a.setFromTriplets(t.begin(), t.end());
  long n = 0;
  CHECK(worst_error(a, false, &n) < 1e-14);
  CHECK(n == 5);
}

TEST_CASE("selected inverse: a chain (tridiagonal, natural order) and a dense matrix (one supernode)") {
  RandomStream rng(11);
  const SpMat chain = field_like(1, 40, 0, 0, rng);
  long n = 0;
  CHECK(worst_error(chain, false, &n) < 1e-12);
  CHECK(n == 40 + 39);
  Eigen::MatrixXd b = Eigen::MatrixXd::Zero(30, 30);
  for (int i = 0; i < 30; ++i)
    for (int j = 0; j < 30; ++j) b(i, j) = uniform(rng) - 0.5;
  const Eigen::MatrixXd dense = b * b.transpose() + 30 * Eigen::MatrixXd::Identity(30, 30);
  const SpMat full = dense.sparseView();
  CHECK(worst_error(full, false, &n) < 1e-12);
  CHECK(n == 30 * 31 / 2);
}

TEST_CASE("selected inverse: fields in minimum-degree order, with and without a dense corner of fixed columns") {
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    RandomStream rng(seed);
    long n = 0;
    CHECK(worst_error(field_like(12, 9, 0, 0, rng), true, &n) < 1e-11);
    CHECK(n > 108);
    // the fixed columns last, as the REML equations order them
    const SpMat a = field_like(10, 8, 20, 4, rng);
    CHECK(worst_error(a, false, &n) < 1e-11);
    CHECK(worst_error(a, true, &n) < 1e-11);
  }
}

}  // namespace
}  // namespace furrow
