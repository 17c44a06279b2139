#include "core/letter_groups.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("no differences: every level shares letter a") {
  const auto l = letter_groups({3, 2, 1}, [](int, int) { return false; });
  CHECK(l == std::vector<std::string>{"a", "a", "a"});
}

TEST_CASE("all pairs differ: one letter each, a for the largest mean") {
  const auto l = letter_groups({1, 3, 2}, [](int, int) { return true; });
  CHECK(l == std::vector<std::string>{"c", "a", "b"});
}

TEST_CASE("overlapping groups (Piepho 2004, the chain case): A=B, B=C, A!=C") {
  // Means 10 > 8 > 6: only the extremes differ. Expected display: a, ab, b.
  const auto l = letter_groups({10, 8, 6}, [](int i, int j) { return i == 0 && j == 2; });
  CHECK(l == std::vector<std::string>{"a", "ab", "b"});
}

TEST_CASE("letters are consistent with every comparison") {
  // Five means; pairs further apart than 2 differ.
  const std::vector<double> m = {9, 8, 6.5, 5, 1};
  auto differ = [&](int i, int j) { return std::abs(m[i] - m[j]) > 2; };
  const auto l = letter_groups(m, differ);
  for (int i = 0; i < 5; ++i)
    for (int j = i + 1; j < 5; ++j) {
      bool share = false;
      for (char c : l[i]) if (l[j].find(c) != std::string::npos) share = true;
      INFO(i << " " << j << ": " << l[i] << " / " << l[j]);
      CHECK(share == !differ(i, j));
    }
}

}  // namespace
}  // namespace furrow
