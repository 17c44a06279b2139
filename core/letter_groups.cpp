#include "core/letter_groups.h"

#include <algorithm>
#include <numeric>

namespace furrow {
namespace {

using Column = std::vector<char>;   // membership per level

bool subset_of(const Column& a, const Column& b) {
  for (size_t i = 0; i < a.size(); ++i)
    if (a[i] && !b[i]) return false;
  return true;
}

// Removes columns contained in another column (keeps one of equal columns).
void absorb(std::vector<Column>* columns) {
  std::vector<Column> kept;
  for (size_t i = 0; i < columns->size(); ++i) {
    bool absorbed = false;
    for (size_t j = 0; j < columns->size() && !absorbed; ++j) {
      if (i == j) continue;
      if (subset_of((*columns)[i], (*columns)[j]) && ((*columns)[i] != (*columns)[j] || j < i)) absorbed = true;
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
  std::vector<std::vector<char>> significant(t, std::vector<char>(t, 0));
  std::vector<Column> columns{Column(t, 1)};
  // Insert: split every column that holds a significantly different pair.
  for (int i = 0; i < t; ++i) {
    for (int j = i + 1; j < t; ++j) {
      if (!differ(i, j)) continue;
      significant[i][j] = significant[j][i] = 1;
      std::vector<Column> next;
      for (const Column& c : columns) {
        if (c[i] && c[j]) {
          Column without_i = c, without_j = c;
          without_i[i] = 0;
          without_j[j] = 0;
          next.push_back(std::move(without_i));
          next.push_back(std::move(without_j));
        } else {
          next.push_back(c);
        }
      }
      columns = std::move(next);
      absorb(&columns);
    }
  }
  // Sweep: drop a level from a column when every pair it would leave
  // uncovered is still covered by another column.
  auto covered_elsewhere = [&](size_t skip, int a, int b) {
    for (size_t k = 0; k < columns.size(); ++k)
      if (k != skip && columns[k][a] && columns[k][b]) return true;
    return false;
  };
  for (size_t k = 0; k < columns.size(); ++k) {
    for (int i = 0; i < t; ++i) {
      if (!columns[k][i]) continue;
      bool needed = false;
      for (int j = 0; j < t && !needed; ++j)
        if (j != i && columns[k][j] && !significant[i][j] && !covered_elsewhere(k, i, j)) needed = true;
      // A level alone in its only column keeps it.
      bool elsewhere = false;
      for (size_t m = 0; m < columns.size(); ++m) if (m != k && columns[m][i]) elsewhere = true;
      if (!needed && elsewhere) columns[k][i] = 0;
    }
  }
  columns.erase(std::remove_if(columns.begin(), columns.end(),
                               [](const Column& c) { return std::none_of(c.begin(), c.end(), [](char x) { return x; }); }),
                columns.end());
  // Letters in order of the best mean each column holds.
  std::vector<int> rank(t);
  std::vector<int> order(t);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](int a, int b) { return means[a] > means[b]; });
  for (int r = 0; r < t; ++r) rank[order[r]] = r;
  auto first_rank = [&](const Column& c) {
    int best = t;
    for (int i = 0; i < t; ++i) if (c[i]) best = std::min(best, rank[i]);
    return best;
  };
  std::stable_sort(columns.begin(), columns.end(),
                   [&](const Column& a, const Column& b) { return first_rank(a) < first_rank(b); });
  std::vector<std::string> out(t);
  for (size_t k = 0; k < columns.size(); ++k)
    for (int i = 0; i < t; ++i)
      if (columns[k][i]) out[i] += letter_name(static_cast<int>(k));
  return out;
}

}  // namespace furrow
