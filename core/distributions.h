#pragma once
// Probability functions the analysis needs, wrapping Boost.Math so that its
// headers and exceptions stay inside distributions.cpp. Degrees of freedom
// may be +infinity where stated.

namespace furrow {

// P(F > f) for an F(df1, df2) variable. Returns NaN only for invalid input
// (df <= 0 or f < 0 or NaN), which callers must not pass.
double f_upper_tail(double f, double df1, double df2);

// P(X > x) for a chi-square variable on df degrees of freedom.
double chi_square_upper_tail(double x, double df);

// Quantile of Student's t: P(T <= x) = p. df may be +infinity (normal).
double t_quantile(double p, double df);

// P(|T| > |t|), two-sided. df may be +infinity.
double t_two_sided_p(double t, double df);

// The power of the two-sided t test at level alpha with `df` error degrees
// of freedom when the true difference is `delta` standard errors: the
// probability that a noncentral t with noncentrality `delta` lies outside
// +-t(1 - alpha/2; df). df may be +infinity (normal).
double t_test_power(double delta, double df, double alpha);

// The smallest true difference, in standard errors, that the two-sided t
// test at level alpha detects with probability `power` (the exact root of
// t_test_power). The usual (t(1 - alpha/2) + t(power)) is only its
// large-df approximation: 5 % small at 2 error DF, 14 % at 1.
double detectable_difference_in_se(double df, double alpha, double power);

}  // namespace furrow
