#include "core/letter_groups.h"

#include <algorithm>
#include <bitset>
#include <numeric>

namespace furrow {
namespace {

// Columns are sets of levels; levels are renumbered by descending mean so
// that the columns insert-and-absorb creates stay few (pairs are processed in
// the order of the ranking, as Piepho recommends for sorted means).
constexpr int kMaxLevels = 256;
using Column = std::bitset<kMaxLevels>;

bool subset_of(const Column& a, const Column& b) { return (a & ~b).none(); }

// Removes columns contained in another column (keeps one of equal columns).
void absorb(std::vector<Column>* columns) {
  std::vector<Column> kept;
  const size_t n = columns->size();
  for (size_t i = 0; i < n; ++i) {
    bool absorbed = false;
    for (size_t j = 0; j < n && !absorbed; ++j) {
      if (i == j) continue;
      const Column& a = (*columns)[i];
      const Column& b = (*columns)[j];
      if (subset_of(a, b) && (a != b || j < i)) absorbed = true;
    }
    if (!absorbed) kept.push_back((*columns)[i]);
  }
  *columns = std::move(kept);
}

std::string letter_name(int index) {
  constexpr int kAlphabet = 26;
  const int round = index / (2 * kAlphabet);
  const int within = index % (2 * kAlphabet);
  std::string s(1, within < kAlphabet ? static_cast<char>('a' + within) : static_cast<char>('A' + within - kAlphabet));
  if (round > 0) s += std::to_string(round);
  return s;
}

}  // namespace

std::vector<std::string> letter_groups(const std::vector<double>& means,
                                       const std::function<bool(int, int)>& differ) {
  const int t = static_cast<int>(means.size());
  std::vector<std::string> out(t);
  if (t == 0 || t > kMaxLevels) return out;
  // rank order: order[r] = level with the r-th largest mean.
  std::vector<int> order(t);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](int a, int b) { return means[a] > means[b]; });
  std::vector<Column> significant(t);
  for (int a = 0; a < t; ++a)
    for (int b = a + 1; b < t; ++b) {
      const int i = std::min(order[a], order[b]), j = std::max(order[a], order[b]);
      if (differ(i, j)) { significant[a].set(b); significant[b].set(a); }
    }
  Column all;
  for (int r = 0; r < t; ++r) all.set(r);
  std::vector<Column> columns{all};
  // Insert: split every column that holds a significantly different pair.
  for (int a = 0; a < t; ++a) {
    for (int b = a + 1; b < t; ++b) {
      if (!significant[a][b]) continue;
      std::vector<Column> next;
      bool split = false;
      for (const Column& c : columns) {
        if (c[a] && c[b]) {
          Column without_a = c, without_b = c;
          without_a.reset(a);
          without_b.reset(b);
          next.push_back(without_a);
          next.push_back(without_b);
          split = true;
        } else {
          next.push_back(c);
        }
      }
      if (!split) continue;
      columns = std::move(next);
      absorb(&columns);
    }
  }
  // Sweep: drop a level from a column when every pair it would leave
  // uncovered is still covered by another column.
  for (size_t k = 0; k < columns.size(); ++k) {
    for (int a = 0; a < t; ++a) {
      if (!columns[k][a]) continue;
      bool elsewhere = false;
      Column covered_elsewhere;
      for (size_t m = 0; m < columns.size(); ++m) {
        if (m == k || !columns[m][a]) continue;
        elsewhere = true;
        covered_elsewhere |= columns[m];
      }
      if (!elsewhere) continue;   // a level keeps at least one letter
      Column partners = columns[k] & ~significant[a];
      partners.reset(a);
      if ((partners & ~covered_elsewhere).none()) columns[k].reset(a);
    }
  }
  columns.erase(std::remove_if(columns.begin(), columns.end(), [](const Column& c) { return c.none(); }),
                columns.end());
  auto first_rank = [&](const Column& c) {
    for (int r = 0; r < t; ++r) if (c[r]) return r;
    return t;
  };
  std::stable_sort(columns.begin(), columns.end(),
                   [&](const Column& a, const Column& b) { return first_rank(a) < first_rank(b); });
  for (size_t k = 0; k < columns.size(); ++k)
    for (int r = 0; r < t; ++r)
      if (columns[k][r]) out[order[r]] += letter_name(static_cast<int>(k));
  return out;
}

}  // namespace furrow
