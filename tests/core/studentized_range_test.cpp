// The studentized range distribution against a published table and an
// identity with Student's t.

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <sstream>

#include "core/distributions.h"
#include "core/studentized_range.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

TEST_CASE("quantiles equal the published table of critical values: Gleason (1998), STB-46 dm64, extending "
          "Harter (1960), Annals of Mathematical Statistics 31, 1122-1147, Table 3; 90 values") {
  std::istringstream in(test::read_text(test::reference_path("studentized-range/q-critical.csv")));
  std::string line;
  std::getline(in, line);   // header alpha,k,df,q
  int checked = 0;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    double alpha = 0, df = 0, q = 0;
    int k = 0;
    char dfbuf[32] = {};
    REQUIRE(std::sscanf(line.c_str(), "%lf,%d,%31[^,],%lf", &alpha, &k, dfbuf, &q) == 4);
    df = std::string(dfbuf) == "inf" ? INFINITY : std::atof(dfbuf);
    const double got = studentized_range_quantile(1 - alpha, k, df);
    // Tolerance from SOURCE.md: half a unit in the last printed digit.
    const double tol = q < 10 ? 0.0005 : 0.005;
    INFO("alpha " << alpha << " k " << k << " df " << df << ": table " << q << ", got " << got);
    CHECK(std::abs(got - q) <= tol + 1e-12);
    ++checked;
  }
  CHECK(checked == 90);
}

TEST_CASE("for two means q equals sqrt(2) times Student's t quantile (a property of the distribution)") {
  for (double df : {2.0, 3.0, 5.0, 10.0, 30.0, 120.0, 1e4, std::numeric_limits<double>::infinity()}) {
    for (double alpha : {0.10, 0.05, 0.01}) {
      const double q = studentized_range_quantile(1 - alpha, 2, df);
      const double t = t_quantile(1 - alpha / 2, df);
      INFO("df " << df << " alpha " << alpha);
      CHECK(q == doctest::Approx(std::sqrt(2.0) * t).epsilon(1e-9));
    }
  }
}

TEST_CASE("cdf is 0 at 0, increases, and reaches 1") {
  CHECK(studentized_range_cdf(0.0, 5, 10) == 0.0);
  double previous = 0;
  for (double q = 0.5; q < 30; q += 0.5) {
    const double c = studentized_range_cdf(q, 5, 10);
    CHECK(c >= previous);
    previous = c;
  }
  CHECK(previous == doctest::Approx(1.0).epsilon(1e-7));
}

}  // namespace
}  // namespace furrow
