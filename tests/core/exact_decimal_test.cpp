#include "core/exact_decimal.h"

#include <doctest/doctest.h>

#include <cmath>

namespace furrow {
namespace {

TEST_CASE("decimal text is read exactly") {
  auto v = parse_exact_decimal("1000000000000.4");
  REQUIRE(v.ok());
  CHECK(v->mantissa == static_cast<__int128>(10000000000004LL));
  CHECK(v->scale == 1);
  v = parse_exact_decimal("  -0.025 ");
  REQUIRE(v.ok());
  CHECK(v->mantissa == -25);
  CHECK(v->scale == 3);
  v = parse_exact_decimal("1.5e3");
  REQUIRE(v.ok());
  CHECK(v->mantissa == 15);
  CHECK(v->scale == -2);
  v = parse_exact_decimal("+7");
  REQUIRE(v.ok());
  CHECK(v->mantissa == 7);
}

TEST_CASE("text that is not a number is refused with the text in the message") {
  for (const char* bad : {"", "  ", "abc", "1.2.3", "4,5", "1e", "--2", "12kg", "0x10", "nan"}) {
    const auto v = parse_exact_decimal(bad);
    INFO("'" << bad << "'");
    CHECK_FALSE(v.ok());
  }
  CHECK(parse_exact_decimal("12kg").problem().message.find("12kg") != std::string::npos);
  CHECK_FALSE(parse_exact_decimal("1234567890123456789012345678901234567").ok());   // 37 digits
}

TEST_CASE("centring subtracts the first value exactly: 13 constant leading digits keep their last digit") {
  std::vector<ExactDecimal> values;
  for (const char* t : {"1000000000000.4", "1000000000000.3", "1000000000000.5", "1000000000000.4"})
    values.push_back(*parse_exact_decimal(t));
  const auto c = centre_decimals(values);
  REQUIRE(c.ok());
  CHECK(c->offset_text == "1000000000000.4");
  CHECK(c->centred[0] == 0.0);
  CHECK(c->centred[1] == -0.1);   // the double nearest -0.1, from one rounding
  CHECK(c->centred[2] == 0.1);
  // In plain double arithmetic the same difference is off in the 4th digit.
  CHECK(1000000000000.5 - 1000000000000.4 != 0.1);
}

TEST_CASE("values with different numbers of decimals share one scale") {
  std::vector<ExactDecimal> values = {*parse_exact_decimal("5.2"), *parse_exact_decimal("5.25"),
                                      *parse_exact_decimal("4")};
  const auto c = centre_decimals(values);
  REQUIRE(c.ok());
  CHECK(c->offset_text == "5.20");
  CHECK(c->centred[1] == 0.05);
  CHECK(c->centred[2] == -1.2);
}

TEST_CASE("compensated sum keeps small terms next to a large one") {
  CompensatedSum s;
  s.add(1e16);
  for (int i = 0; i < 1000; ++i) s.add(1.0);
  s.add(-1e16);
  CHECK(s.value() == 1000.0);
}

}  // namespace
}  // namespace furrow
