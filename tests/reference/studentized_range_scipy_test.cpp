// Quantiles of the studentized range against scipy.stats.studentized_range
// (Debian's python3-scipy) over k = 2..100 and df = 2..infinity at
// p = 0.90, 0.95, 0.99; the grid is made at test time by
// make_studentized_range_grid.py. Required: 1e-6 relative.

#include <doctest/doctest.h>

#include <cmath>
#include <sstream>

#include "core/studentized_range.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

TEST_SUITE("scipy") {
  TEST_CASE("studentized range quantiles match scipy to 1e-6 relative") {
    std::istringstream in(test::read_text(test::generated_path("qtukey.csv")));
    std::string line;
    std::getline(in, line);
    int checked = 0;
    double worst = 0;
    while (std::getline(in, line)) {
      double p = 0, q = 0;
      int k = 0;
      char dfbuf[32] = {};
      REQUIRE(std::sscanf(line.c_str(), "%lf,%d,%31[^,],%lf", &p, &k, dfbuf, &q) == 4);
      const double df = std::string(dfbuf) == "inf" ? INFINITY : std::atof(dfbuf);
      const double got = studentized_range_quantile(p, k, df);
      const double rel = std::abs(got - q) / q;
      worst = std::max(worst, rel);
      INFO("p " << p << " k " << k << " df " << df << ": scipy " << q << ", Furrow " << got);
      CHECK(rel <= 1e-6);
      ++checked;
    }
    CHECK(checked == 360);
    MESSAGE("largest relative difference from scipy: " << worst);
  }
}

// The quantile read from panels of the inner integral (from 30 error DF on)
// against the direct double integral at every step, up to thousands of
// levels (beyond the scipy grid above, which checks both up to 100).
TEST_CASE("studentized range quantiles from interpolated panels equal the direct integral to 2e-9") {
  for (int k : {3, 50, 400, 4800})
    for (double df : {30.0, 200.0, 5000.0})
      for (double p : {0.95, 0.99}) {
        const double fast = studentized_range_quantile(p, k, df);
        const double direct = studentized_range_quantile_direct(p, k, df);
        INFO("p " << p << " k " << k << " df " << df << ": panels " << fast << ", direct " << direct);
        CHECK(std::abs(fast - direct) <= 2e-9 * direct);
      }
}

}  // namespace
}  // namespace furrow
