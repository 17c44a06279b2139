// Numbers as the tables print them: a mean near 10^12 whose plots differ by
// units keeps the digits that differ (common practice: show a mean to a
// tenth of the spread of the plots; no published source).

#include "app/work/number_text.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("a mean near 10^12 is printed to the digits its plots differ in") {
  CHECK(table_number(1000000000012.34, digits_for(1000000000012.34, 2.5, 6)) == "1000000000012.3");
  CHECK(table_number(41.2345, digits_for(41.2345, 4.4, 6)) == "41.2345");   // ordinary data: 6 digits as before
  CHECK(digits_for(0, 1, 5) == 5);
  CHECK(digits_for(1e300, 1e-300, 6) == 15);
}

}  // namespace
}  // namespace furrow
