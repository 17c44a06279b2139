#include "core/studentized_range.h"

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/quadrature/gauss.hpp>
#include <algorithm>
#include <boost/math/tools/roots.hpp>
#include <cassert>
#include <cmath>
#include <limits>
#include <array>
#include <unordered_map>

namespace furrow {
namespace {

constexpr double kInvSqrt2 = 0.70710678118654752440;
constexpr double kInvSqrt2Pi = 0.39894228040143267794;
// Beyond |z| = 9 the normal density is below 1e-18: the inner integrand,
// bounded by it, contributes nothing at double precision.
constexpr double kInnerLimit = 9.0;
constexpr int kInnerPanels = 12;
// The chi-based density of s is integrated between these tail probabilities,
// split at its mode, each half in kOuterPanels panels.
constexpr double kOuterTail = 1e-15;
constexpr int kOuterPanels = 5;
// Few degrees of freedom give a wide, skewed density of s: more panels.
constexpr int kOuterPanelsFewDf = 10;
constexpr double kFewDf = 10;

using Rule = boost::math::quadrature::gauss<double, 20>;

// Composite 20-point Gauss-Legendre on [a, b] in `panels` equal panels: a
// fixed cost and, for these smooth integrands, about 1e-12 relative error.
template <class F>
double composite(F f, double a, double b, int panels) {
  const auto& x = Rule::abscissa();
  const auto& w = Rule::weights();
  const double h = (b - a) / panels;
  double total = 0;
  for (int p = 0; p < panels; ++p) {
    const double c = a + (p + 0.5) * h, r = 0.5 * h;
    double sum = 0;
    for (size_t i = 0; i < x.size(); ++i)
      sum += x[i] == 0 ? w[i] * f(c) : w[i] * (f(c - r * x[i]) + f(c + r * x[i]));
    total += r * sum;
  }
  return total;
}

// Phi(b) - Phi(a) for a < b without cancellation in either tail.
double normal_interval(double a, double b) {
  if (a >= 0) return 0.5 * (std::erfc(a * kInvSqrt2) - std::erfc(b * kInvSqrt2));
  if (b <= 0) return 0.5 * (std::erfc(-b * kInvSqrt2) - std::erfc(-a * kInvSqrt2));
  return 1.0 - 0.5 * (std::erfc(-a * kInvSqrt2) + std::erfc(b * kInvSqrt2));
}

// P_inf(w; k): the cdf of the range of k standard normals.
double range_cdf(double w, int k) {
  if (w <= 0) return 0.0;
  auto integrand = [w, k](double z) {
    const double inside = normal_interval(z, z + w);
    if (inside <= 0) return 0.0;
    return kInvSqrt2Pi * std::exp(-0.5 * z * z) * std::pow(inside, k - 1);
  };
  // Split at -w/2, the centre of symmetry of the integrand.
  const double mid = std::clamp(-0.5 * w, -kInnerLimit + 1, kInnerLimit - 1);
  const double total = composite(integrand, -kInnerLimit, mid, kInnerPanels / 2) +
                       composite(integrand, mid, kInnerLimit, kInnerPanels / 2);
  return std::min(1.0, k * total);
}

}  // namespace

double studentized_range_cdf(double q, int k, double df) {
  assert(k >= 2 && df > 0);
  if (!(q > 0)) return 0.0;
  if (std::isinf(df)) return range_cdf(q, k);
  // s = sqrt(X / df), X ~ chi2(df): log density of s.
  const double log_norm = 0.5 * df * std::log(df) - std::lgamma(0.5 * df) - (0.5 * df - 1) * std::log(2.0);
  auto integrand = [&](double s) {
    if (s <= 0) return 0.0;
    const double log_density = log_norm + (df - 1) * std::log(s) - 0.5 * df * s * s;
    return std::exp(log_density) * range_cdf(q * s, k);
  };
  const boost::math::chi_squared chi(df);
  const double s_lo = std::sqrt(boost::math::quantile(chi, kOuterTail) / df);
  const double s_hi = std::sqrt(boost::math::quantile(boost::math::complement(chi, kOuterTail)) / df);
  const double mode = df > 1 ? std::clamp(std::sqrt((df - 1) / df), s_lo, s_hi) : 0.5 * (s_lo + s_hi);
  const int panels = df < kFewDf ? kOuterPanelsFewDf : kOuterPanels;
  const double total = composite(integrand, s_lo, mode, panels) + composite(integrand, mode, s_hi, panels);
  return std::min(1.0, total);
}

namespace {

// Root of cdf(q) = p inside a bracket [lo, hi] where cdf(lo) < p <= cdf(hi).
template <class Cdf>
double solve(Cdf cdf, double p, double lo, double f_lo, double hi, double f_hi) {
  std::uintmax_t iterations = 200;
  auto f = [&](double q) { return cdf(q) - p; };
  const auto range =
      boost::math::tools::toms748_solve(f, lo, hi, f_lo, f_hi, boost::math::tools::eps_tolerance<double>(42), iterations);
  return 0.5 * (range.first + range.second);
}

}  // namespace

namespace {

constexpr double kPanelsFromDf = 30;

// P_inf(w; k) interpolated from values computed once per panel of w: each
// panel of width kPanelWidth holds range_cdf at its kNodes Chebyshev points
// (second kind, ends included) and is read by barycentric interpolation
// (Berrut & Trefethen 2004, SIAM Review 46, 501-517). The function is
// analytic and varies on a scale of at least 0.3 (k up to 10^4), so the
// interpolation error is far below the quadrature's 1e-12; panels are made
// only where the quantile search looks.
class RangeCdfPanels {
 public:
  explicit RangeCdfPanels(int k) : k_(k) {}
  double operator()(double w) {
    if (w <= 0) return 0.0;
    const int index = static_cast<int>(w / kPanelWidth);
    auto it = panels_.find(index);
    if (it == panels_.end()) {
      std::array<double, kNodes> values;
      for (int j = 0; j < kNodes; ++j) values[j] = range_cdf(node(index, j), k_);
      it = panels_.emplace(index, values).first;
    }
    const std::array<double, kNodes>& f = it->second;
    double num = 0, den = 0;
    for (int j = 0; j < kNodes; ++j) {
      const double x = node(index, j);
      if (w == x) return f[j];
      const double weight = ((j % 2) ? -1.0 : 1.0) * ((j == 0 || j == kNodes - 1) ? 0.5 : 1.0) / (w - x);
      num += weight * f[j];
      den += weight;
    }
    return std::clamp(num / den, 0.0, 1.0);
  }

 private:
  static constexpr int kNodes = 17;
  static constexpr double kPanelWidth = 0.25;
  static double node(int index, int j) {
    const double mid = (index + 0.5) * kPanelWidth, half = 0.5 * kPanelWidth;
    return mid - half * std::cos(M_PI * j / (kNodes - 1));
  }
  int k_;
  std::unordered_map<int, std::array<double, kNodes>> panels_;
};

// P(Q <= q; k, df) as studentized_range_cdf, with P_inf read from `panels`.
double cdf_from_panels(double q, double df, RangeCdfPanels& panels) {
  if (!(q > 0)) return 0.0;
  if (std::isinf(df)) return panels(q);
  const double log_norm = 0.5 * df * std::log(df) - std::lgamma(0.5 * df) - (0.5 * df - 1) * std::log(2.0);
  auto integrand = [&](double s) {
    if (s <= 0) return 0.0;
    const double log_density = log_norm + (df - 1) * std::log(s) - 0.5 * df * s * s;
    return std::exp(log_density) * panels(q * s);
  };
  const boost::math::chi_squared chi(df);
  const double s_lo = std::sqrt(boost::math::quantile(chi, kOuterTail) / df);
  const double s_hi = std::sqrt(boost::math::quantile(boost::math::complement(chi, kOuterTail)) / df);
  const double mode = df > 1 ? std::clamp(std::sqrt((df - 1) / df), s_lo, s_hi) : 0.5 * (s_lo + s_hi);
  const int outer = df < kFewDf ? kOuterPanelsFewDf : kOuterPanels;
  return std::min(1.0, composite(integrand, s_lo, mode, outer) + composite(integrand, mode, s_hi, outer));
}

}  // namespace

namespace {

// The quantile search shared by both forms: the df = infinity quantile (one
// integral per step, and a lower bound of the finite-df one) first, then a
// bracket widened from it until the root is inside.
template <class CdfInf, class Cdf>
double quantile_search(double p, double df, CdfInf cdf_inf, Cdf cdf) {
  double lo = 0.0, f_lo = -p, hi = 4.0, f_hi = cdf_inf(hi) - p;
  while (f_hi < 0) { lo = hi; f_lo = f_hi; hi *= 2; f_hi = cdf_inf(hi) - p; }
  const double q_inf = solve(cdf_inf, p, lo, f_lo, hi, f_hi);
  if (std::isinf(df)) return q_inf;
  lo = q_inf;
  f_lo = cdf(lo) - p;
  if (f_lo >= 0) return q_inf;   // df so large that the difference is below resolution
  // q(df) / q(inf) is about 1 + c / df; widen the step until the root is inside.
  double step = std::max(1e-3, 3.0 / df);
  hi = q_inf * (1 + step);
  f_hi = cdf(hi) - p;
  while (f_hi < 0) {
    lo = hi;
    f_lo = f_hi;
    step *= 2;
    hi = q_inf * (1 + step);
    f_hi = cdf(hi) - p;
  }
  return solve(cdf, p, lo, f_lo, hi, f_hi);
}

}  // namespace

double studentized_range_quantile(double p, int k, double df) {
  assert(p > 0 && p < 1 && k >= 2 && df > 0);
  // With few error DF the search spans a wide range of w, where panels cost
  // more than they save; with none (df infinite) one integral per step is cheap.
  if (std::isinf(df) || df < kPanelsFromDf) return studentized_range_quantile_direct(p, k, df);
  RangeCdfPanels panels(k);
  return quantile_search(p, df, [&](double q) { return panels(q); },
                         [&](double q) { return cdf_from_panels(q, df, panels); });
}

double studentized_range_quantile_direct(double p, int k, double df) {
  assert(p > 0 && p < 1 && k >= 2 && df > 0);
  return quantile_search(p, df, [k](double q) { return range_cdf(q, k); },
                         [k, df](double q) { return studentized_range_cdf(q, k, df); });
}

}  // namespace furrow
