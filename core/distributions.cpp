#include "core/distributions.h"

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/distributions/non_central_t.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <limits>

namespace furrow {

namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
}

double f_upper_tail(double f, double df1, double df2) {
  if (!(df1 > 0) || !(df2 > 0) || !(f >= 0)) return kNaN;
  try {
    if (std::isinf(f)) return 0.0;
    return boost::math::cdf(boost::math::complement(boost::math::fisher_f(df1, df2), f));
  } catch (...) {
    return kNaN;
  }
}

double chi_square_upper_tail(double x, double df) {
  if (!(df > 0) || !(x >= 0)) return kNaN;
  try {
    if (std::isinf(x)) return 0.0;
    return boost::math::cdf(boost::math::complement(boost::math::chi_squared(df), x));
  } catch (...) {
    return kNaN;
  }
}

double t_quantile(double p, double df) {
  if (!(p > 0 && p < 1) || !(df > 0)) return kNaN;
  try {
    if (std::isinf(df)) return boost::math::quantile(boost::math::normal(), p);
    return boost::math::quantile(boost::math::students_t(df), p);
  } catch (...) {
    return kNaN;
  }
}

double t_two_sided_p(double t, double df) {
  if (!(df > 0) || std::isnan(t)) return kNaN;
  try {
    const double a = std::abs(t);
    if (std::isinf(df)) return 2 * boost::math::cdf(boost::math::complement(boost::math::normal(), a));
    return 2 * boost::math::cdf(boost::math::complement(boost::math::students_t(df), a));
  } catch (...) {
    return kNaN;
  }
}

double t_test_power(double delta, double df, double alpha) {
  if (!(df > 0) || !(alpha > 0 && alpha < 1) || std::isnan(delta)) return kNaN;
  try {
    if (std::isinf(df)) {
      const boost::math::normal z;
      const double c = boost::math::quantile(z, 1 - alpha / 2);
      return boost::math::cdf(boost::math::complement(z, c - delta)) + boost::math::cdf(z, -c - delta);
    }
    const double c = boost::math::quantile(boost::math::students_t(df), 1 - alpha / 2);
    const boost::math::non_central_t nct(df, delta);
    return boost::math::cdf(boost::math::complement(nct, c)) + boost::math::cdf(nct, -c);
  } catch (...) {
    return kNaN;
  }
}

double detectable_difference_in_se(double df, double alpha, double power) {
  if (!(df > 0) || !(alpha > 0 && alpha < 1) || !(power > alpha && power < 1)) return kNaN;
  // The power grows with delta: bisection between 0 and a bound that is enough.
  double lo = 0, hi = t_quantile(1 - alpha / 2, df) + t_quantile(power, df);
  if (!std::isfinite(hi)) return kNaN;
  while (t_test_power(hi, df, alpha) < power) {
    hi *= 2;
    if (hi > 1e6) return kNaN;
  }
  for (int i = 0; i < 200 && hi - lo > 1e-12 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    const double p = t_test_power(mid, df, alpha);
    if (std::isnan(p)) return kNaN;
    (p < power ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

}  // namespace furrow
