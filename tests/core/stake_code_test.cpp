// The stake code (core/stake_code.h): written and read back, with the
// separator and the escape character inside names and labels.

#include "core/stake_code.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("a stake code is one line and reads back field for field, whatever the name and label hold") {
  const StakeCode code{"0123456789abcdef0123456789abcdef", "Harrow Ridge | 100% oats", "R2|07"};
  const std::string text = stake_code_text(code);
  CHECK(text == "FRW1|0123456789abcdef0123456789abcdef|Harrow Ridge %7C 100%25 oats|R2%7C07");
  CHECK(text.find('\n') == std::string::npos);
  const auto back = read_stake_code("  " + text + "\n");
  REQUIRE(back.has_value());
  CHECK(back->trial_uid == code.trial_uid);
  CHECK(back->trial_name == code.trial_name);
  CHECK(back->plot_label == code.plot_label);
}

TEST_CASE("a long trial name is cut to 40 bytes of whole characters in the code; the uid and label stay whole") {
  const std::string name = "Sortenversuch Hafer Nordfeld Gr\xC3\xBCnland 2026 zweite Aussaat";
  const StakeCode code{"0123456789abcdef0123456789abcdef", name, "N-204"};
  const auto back = read_stake_code(stake_code_text(code));
  REQUIRE(back.has_value());
  CHECK(back->trial_name == name.substr(0, 40));
  CHECK(back->plot_label == "N-204");
  // A cut that would split the two bytes of a character keeps it out whole.
  const auto split = read_stake_code(stake_code_text({code.trial_uid, std::string(39, 'a') + "\xC3\xBC" + "b", "1"}));
  REQUIRE(split.has_value());
  CHECK(split->trial_name == std::string(39, 'a'));
}

TEST_CASE("text that is not a stake code is not read as one") {
  for (const char* text : {"101", "FRW1|abc|name|101", "FRW2|0123456789abcdef0123456789abcdef|n|101",
                           "FRW1|0123456789abcdef0123456789abcdef|n|", "FRW1|0123456789abcdef0123456789abcdef|n|1%zz",
                           "FRW1|0123456789abcdef0123456789abcdeg|n|101", "FRW1|0123456789abcdef0123456789abcdef|n|1|2"}) {
    CAPTURE(text);
    CHECK_FALSE(read_stake_code(text).has_value());
  }
}

}  // namespace
}  // namespace furrow
