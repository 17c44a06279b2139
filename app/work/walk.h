#pragma once
// Today's walk: the cells (plot, trait, occasion) a device records today, in
// the order the crew meets them. Made from a WalkChoice (saved in the trial
// file) and the trial's plan; pure, no I/O.
//
// Order: one trait across every plot of the chosen blocks in walking order,
// then the next trait; or, with every_trait_per_plot, every chosen trait on a
// plot before the next plot. A trait with fewer occasions than the walk's is
// walked at its last occasion.

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "storage/trial_store.h"

namespace furrow {

struct WalkCell {
  size_t plot = 0, trait = 0;
  int occasion = 1;
  bool operator==(const WalkCell&) const = default;
};

class Walk {
 public:
  Walk() = default;
  // Unknown trait codes and blocks are left out; a choice left with no trait
  // walks the trial's first trait; no blocks means every block.
  Walk(const StoredTrial& trial, const WalkChoice& choice);

  const std::vector<size_t>& traits() const { return traits_; }
  const std::vector<size_t>& plots() const { return plots_; }   // plot indices in walking order
  const std::vector<int>& blocks() const { return blocks_; }    // empty: every block
  int occasion() const { return occasion_; }
  bool every_trait_per_plot() const { return per_plot_; }
  bool has_trait(size_t trait) const { return trait < trait_in_.size() && trait_in_[trait]; }
  bool has_plot(size_t plot) const { return plot < plot_in_.size() && plot_in_[plot]; }
  // The occasion this walk records of a trait.
  int occasion_for(size_t trait) const { return trait < occasions_.size() ? occasions_[trait] : 1; }
  bool contains(size_t plot, size_t trait, int occasion) const {
    return has_plot(plot) && has_trait(trait) && occasion == occasion_for(trait);
  }
  size_t size() const { return plots_.size() * traits_.size(); }
  // The k-th cell of the walk, 0 <= k < size().
  WalkCell at(size_t k) const;
  // The place of a cell in the walk, or nullopt when it is not part of it.
  std::optional<size_t> index_of(size_t plot, size_t trait, int occasion) const;
  // The cell after / before `from` in walk order: for a cell outside the walk,
  // the next / previous plot in walking order with the same trait and occasion.
  // nullopt at either end.
  std::optional<WalkCell> after(const WalkCell& from, size_t plot_count) const;
  std::optional<WalkCell> before(const WalkCell& from) const;

  WalkChoice choice(const StoredTrial& trial) const;
  // "Height (cm), Stand count; blocks 1-2; one trait at a time" (occasion
  // named when a walked trait has more than one).
  std::string describe(const StoredTrial& trial) const;

 private:
  std::vector<size_t> traits_, plots_;
  std::vector<int> blocks_, occasions_;
  std::vector<bool> trait_in_, plot_in_;
  std::vector<size_t> rank_of_plot_, rank_of_trait_;   // place in plots_ / traits_
  int occasion_ = 1;
  bool per_plot_ = false;
};

}  // namespace furrow
