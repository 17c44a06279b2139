// One vocabulary: counts take the right plural, the significance level is
// named one way everywhere (common practice: "LSD (5 %)" is the test's level).

#include "app/work/glossary.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("counts take the plural of their term") {
  CHECK(count_of(1, term::kConflict) == "1 conflict");
  CHECK(count_of(2, term::kConflict) == "2 conflicts");
  CHECK(count_of(0, term::kOutlierPlot) == "0 outlier plots");
  CHECK(count_of(1, term::kOutlierPlot) == "1 outlier plot");
  CHECK(count_of(3, term::kValueToCheck) == "3 values to check");
  CHECK(count_of(1, term::kValueToCheck) == "1 value to check");
  CHECK(count_of(5, "required value") == "5 required values");
}

TEST_CASE("LSD and Tukey HSD are titled by the significance level") {
  CHECK(term::lsd_title(0.05) == "LSD (5 %)");
  CHECK(term::hsd_title(0.01) == "Tukey HSD (1 %)");
  CHECK(term::lsd_title(0.1) == "LSD (10 %)");
}

}  // namespace
}  // namespace furrow
