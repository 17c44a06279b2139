#pragma once
// Letter display of all pairwise comparisons: levels that share a letter do
// not differ significantly. Insert-and-absorb algorithm with the sweeping
// step of Piepho, H.-P. (2004), "An algorithm for a letter-based
// representation of all-pairwise comparisons", J. Computational and
// Graphical Statistics 13, 456-466.

#include <functional>
#include <string>
#include <vector>

namespace furrow {

// `means` orders the letters: the level with the largest mean gets "a".
// `differ(i, j)` (i < j) says whether levels i and j differ significantly.
// Returns one letter string per level (e.g. "ab"). Letters run a-z, then
// A-Z, then a1, b1, ... Up to 256 levels; beyond that every string is empty.
std::vector<std::string> letter_groups(const std::vector<double>& means,
                                       const std::function<bool(int, int)>& differ);

}  // namespace furrow
