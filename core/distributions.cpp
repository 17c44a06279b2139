#include "core/distributions.h"

#include <boost/math/distributions/fisher_f.hpp>
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

}  // namespace furrow
