// Takahashi recursions by supernodes (see selected_inverse.h).
//
// For a supernode S (consecutive columns whose patterns nest, so that the
// rows below S form one set R) write L(S,S) = L11 and L(R,S) = L21. With
// Y = L21 L11^-1 the recursions read, in blocks,
//   Z(R,S) = -Z(R,R) Y,
//   Z(S,S) = (L11 L11')^-1 - Y' Z(R,S),
// and Z(R,R) lies on the pattern already computed (R is a clique of the
// filled graph). Dense products then do the work that a column at a time
// would do element by element.
#include "core/selected_inverse.h"

#include <Eigen/Dense>

namespace furrow {

std::vector<double> selected_inverse(const Eigen::SparseMatrix<double>& l) {
  using Mat = Eigen::MatrixXd;
  const int m = static_cast<int>(l.cols());
  const int* outer = l.outerIndexPtr();
  const int* inner = l.innerIndexPtr();
  const double* val = l.valuePtr();
  std::vector<double> z(static_cast<size_t>(l.nonZeros()), 0.0);

  // Fundamental supernodes: column k+1 continues k's supernode when it is
  // k's first row below the diagonal and its pattern is k's less one row.
  std::vector<std::pair<int, int>> supernodes;
  for (int j = 0; j < m;) {
    int k = j;
    while (k + 1 < m) {
      const int len = outer[k + 1] - outer[k];
      if (len < 2 || inner[outer[k] + 1] != k + 1 || outer[k + 2] - outer[k + 1] != len - 1) break;
      ++k;
    }
    supernodes.emplace_back(j, k);
    j = k + 1;
  }

  std::vector<int> where(static_cast<size_t>(m), -1);
  Mat l11, l21, zrr, zrs, zss;
  for (auto s = supernodes.rbegin(); s != supernodes.rend(); ++s) {
    const int f = s->first, last = s->second, w = last - f + 1;
    const int rs = outer[last] + 1;
    const int h = outer[last + 1] - rs;
    l11.setZero(w, w);
    l21.resize(h, w);
    for (int c = 0; c < w; ++c) {
      const int ptr = outer[f + c];
      for (int r = 0; r < w - c; ++r) l11(c + r, c) = val[ptr + r];
      for (int r = 0; r < h; ++r) l21(r, c) = val[ptr + (w - c) + r];
    }
    // Z(R,R) from the columns already done.
    zrr.resize(h, h);
    for (int a = 0; a < h; ++a) where[inner[rs + a]] = a;
    for (int b = 0; b < h; ++b) {
      const int col = inner[rs + b];
      for (int p = outer[col]; p < outer[col + 1]; ++p) {
        const int a = where[inner[p]];
        if (a < 0) continue;
        zrr(a, b) = z[p];
        zrr(b, a) = z[p];
      }
    }
    for (int a = 0; a < h; ++a) where[inner[rs + a]] = -1;

    // Y = L21 L11^-1 (kept in l21), Z(R,S) = -Z(R,R) Y.
    l11.triangularView<Eigen::Lower>().solveInPlace<Eigen::OnTheRight>(l21);
    zrs.noalias() = zrr * l21;
    zrs = -zrs;
    // Z(S,S) = L11^-T L11^-1 - Y' Z(R,S).
    Mat inv = Mat::Identity(w, w);
    l11.triangularView<Eigen::Lower>().solveInPlace(inv);
    zss.noalias() = inv.transpose() * inv;
    if (h > 0) zss.noalias() -= l21.transpose() * zrs;

    for (int c = 0; c < w; ++c) {
      const int ptr = outer[f + c];
      for (int r = 0; r < w - c; ++r) z[ptr + r] = zss(c + r, c);
      for (int r = 0; r < h; ++r) z[ptr + (w - c) + r] = zrs(r, c);
    }
  }
  return z;
}

}  // namespace furrow
