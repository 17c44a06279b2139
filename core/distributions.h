#pragma once
// Probability functions the analysis needs, wrapping Boost.Math so that its
// headers and exceptions stay inside distributions.cpp. Degrees of freedom
// may be +infinity where stated.

namespace furrow {

// P(F > f) for an F(df1, df2) variable. Returns NaN only for invalid input
// (df <= 0 or f < 0 or NaN), which callers must not pass.
double f_upper_tail(double f, double df1, double df2);

// Quantile of Student's t: P(T <= x) = p. df may be +infinity (normal).
double t_quantile(double p, double df);

// P(|T| > |t|), two-sided. df may be +infinity.
double t_two_sided_p(double t, double df);

}  // namespace furrow
