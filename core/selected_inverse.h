// Selected inverse of a sparse symmetric positive definite matrix: the
// elements of (L L')^-1 on the pattern of its Cholesky factor L, by the
// Takahashi recursions (Takahashi, Fagan & Chin 1973; Erisman & Tinney
// 1975), worked a supernode at a time with dense blocks.
#pragma once

#include <Eigen/SparseCore>
#include <vector>

namespace furrow {

// l: lower-triangular and column-major, each column's diagonal first and its
// rows in increasing order (the layout of Eigen's simplicial factors).
// Returns, for each stored element L(i, j), the element Z(i, j) of
// Z = (L L')^-1, in the same order as l's values. The recursions need only
// elements of Z on that pattern, which the elimination tree guarantees.
std::vector<double> selected_inverse(const Eigen::SparseMatrix<double>& l);

}  // namespace furrow
