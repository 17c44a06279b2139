#include "app/work/walk.h"

#include <algorithm>
#include <limits>

namespace furrow {

namespace {
constexpr size_t kNone = std::numeric_limits<size_t>::max();
}

Walk::Walk(const StoredTrial& t, const WalkChoice& c) : occasion_(std::max(1, c.occasion)), per_plot_(c.every_trait_per_plot) {
  const auto& traits = t.plan.traits;
  trait_in_.assign(traits.size(), false);
  for (const std::string& code : c.trait_codes)
    for (size_t k = 0; k < traits.size(); ++k)
      if (traits[k].code == code && !trait_in_[k]) {
        trait_in_[k] = true;
        traits_.push_back(k);
      }
  if (traits_.empty() && !traits.empty()) {
    traits_.push_back(0);
    trait_in_[0] = true;
  }
  occasions_.resize(traits.size());
  for (size_t k = 0; k < traits.size(); ++k) occasions_[k] = std::min(occasion_, std::max(1, traits[k].occasions));
  std::vector<bool> block_in;
  for (int b : c.blocks) {
    const bool exists = std::any_of(t.layout.plots.begin(), t.layout.plots.end(),
                                    [&](const PlannedPlot& p) { return p.block == b; });
    if (exists && std::find(blocks_.begin(), blocks_.end(), b) == blocks_.end()) blocks_.push_back(b);
  }
  std::sort(blocks_.begin(), blocks_.end());
  plot_in_.assign(t.layout.plots.size(), false);
  rank_of_plot_.assign(t.layout.plots.size(), kNone);
  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    const int b = t.layout.plots[i].block;
    if (blocks_.empty() || std::binary_search(blocks_.begin(), blocks_.end(), b)) {
      plot_in_[i] = true;
      rank_of_plot_[i] = plots_.size();
      plots_.push_back(i);
    }
  }
  rank_of_trait_.assign(traits.size(), kNone);
  for (size_t r = 0; r < traits_.size(); ++r) rank_of_trait_[traits_[r]] = r;
}

WalkCell Walk::at(size_t k) const {
  const size_t np = plots_.size(), nt = traits_.size();
  const size_t plot_rank = per_plot_ ? k / nt : k % np;
  const size_t trait_rank = per_plot_ ? k % nt : k / np;
  const size_t trait = traits_[trait_rank];
  return {plots_[plot_rank], trait, occasion_for(trait)};
}

std::optional<size_t> Walk::index_of(size_t plot, size_t trait, int occasion) const {
  if (!contains(plot, trait, occasion)) return std::nullopt;
  const size_t p = rank_of_plot_[plot], r = rank_of_trait_[trait];
  return per_plot_ ? p * traits_.size() + r : r * plots_.size() + p;
}

std::optional<WalkCell> Walk::after(const WalkCell& from, size_t plot_count) const {
  if (const auto k = index_of(from.plot, from.trait, from.occasion)) {
    if (*k + 1 < size()) return at(*k + 1);
    return std::nullopt;
  }
  if (from.plot + 1 < plot_count) return WalkCell{from.plot + 1, from.trait, from.occasion};
  return std::nullopt;
}

std::optional<WalkCell> Walk::before(const WalkCell& from) const {
  if (const auto k = index_of(from.plot, from.trait, from.occasion)) {
    if (*k > 0) return at(*k - 1);
    return std::nullopt;
  }
  if (from.plot > 0) return WalkCell{from.plot - 1, from.trait, from.occasion};
  return std::nullopt;
}

WalkChoice Walk::choice(const StoredTrial& t) const {
  WalkChoice c;
  for (size_t k : traits_) c.trait_codes.push_back(t.plan.traits[k].code);
  c.occasion = occasion_;
  c.blocks = blocks_;
  c.every_trait_per_plot = per_plot_;
  return c;
}

std::string Walk::describe(const StoredTrial& t) const {
  std::string s;
  bool several_occasions = false;
  for (size_t k : traits_) {
    const Trait& tr = t.plan.traits[k];
    s += (s.empty() ? "" : ", ") + tr.name;
    several_occasions = several_occasions || tr.occasions > 1;
  }
  if (several_occasions) s += "; occasion " + std::to_string(occasion_);
  if (blocks_.empty()) {
    s += "; every block";
  } else {
    s += blocks_.size() == 1 ? "; block " : "; blocks ";
    for (size_t i = 0; i < blocks_.size(); ++i) s += (i ? ", " : "") + std::to_string(blocks_[i]);
  }
  if (traits_.size() > 1) s += per_plot_ ? "; every trait on each plot" : "; one trait at a time";
  return s;
}

}  // namespace furrow
