#include "app/work/entry_context.h"

#include <algorithm>
#include <cstdint>
#include <map>

namespace furrow {
namespace {

int combination_index(const TrialPlan& p, const PlannedPlot& plot) {
  int idx = 0;
  for (size_t k = 0; k < plot.levels.size(); ++k) idx = idx * static_cast<int>(p.factors[k].levels.size()) + plot.levels[k];
  return idx;
}

// The blocking code for expectations: block (within site), or field row
// for designs without blocks.
int blocking_code(const TrialPlan& p, const PlannedPlot& plot) {
  constexpr int kBlocksPerSite = 100000;
  return p.design == DesignKind::completely_randomised ? 0
         : p.design == DesignKind::latin_square       ? plot.row
                                                      : plot.site * kBlocksPerSite + plot.block;
}

}  // namespace

TraitEntryContext::TraitEntryContext(const StoredTrial& t, const std::vector<LiveObservation>& live,
                                     size_t trait_index, int occasion)
    : trial_(t), trait_index_(trait_index) {
  const std::int64_t trait_id = t.trait_ids[trait_index];
  std::map<std::int64_t, size_t> index_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) index_of[t.plot_ids[i]] = i;
  for (const auto& x : live) {
    if (x.trait_id != trait_id || x.occasion != occasion) continue;
    if (x.value && x.key.device_id == t.device_id) previous_entries_.push_back(*x.value);
    if (!x.number) continue;
    const size_t plot = index_of.at(x.plot_id);
    const PlannedPlot& pp = t.layout.plots[plot];
    plots_.push_back(plot);
    values_.push_back(*x.number);
    blocks_.push_back(blocking_code(t.plan, pp));
    treatments_.push_back(combination_index(t.plan, pp));
  }
  index_of_plot_.assign(t.layout.plots.size(), SIZE_MAX);
  for (size_t k = 0; k < plots_.size(); ++k) index_of_plot_[plots_[k]] = k;
  leave_one_out_.emplace(values_, blocks_, treatments_);
}

EntryContext TraitEntryContext::for_saved_value(size_t plot_index) const {
  const size_t k = index_of_plot_[plot_index];
  if (k == SIZE_MAX) return for_plot(plot_index);
  EntryContext ctx;
  ctx.previous_entries = recent_entries();
  ctx.slip = leave_one_out_->slip(k);
  const Trait& trait = trial_.plan.traits[trait_index_];
  if (trait.kind != TraitKind::text && trait.kind != TraitKind::category) ctx.expectation = leave_one_out_->expectation(k);
  return ctx;
}

std::vector<std::string> TraitEntryContext::recent_entries() const {
  // The checks look at the last few entries only (a run of repeats).
  constexpr size_t kRecentEntries = 8;
  const size_t keep = std::min(previous_entries_.size(), kRecentEntries);
  return {previous_entries_.end() - static_cast<std::ptrdiff_t>(keep), previous_entries_.end()};
}

EntryContext TraitEntryContext::for_plot(size_t plot_index) const {
  EntryContext ctx;
  ctx.previous_entries = recent_entries();
  std::vector<int> blocks, treatments;
  ctx.other_values.reserve(values_.size());
  blocks.reserve(values_.size());
  treatments.reserve(values_.size());
  for (size_t k = 0; k < values_.size(); ++k) {
    if (plots_[k] == plot_index) continue;
    ctx.other_values.push_back(values_[k]);
    blocks.push_back(blocks_[k]);
    treatments.push_back(treatments_[k]);
  }
  const Trait& trait = trial_.plan.traits[trait_index_];
  const PlannedPlot& target = trial_.layout.plots[plot_index];
  if (trait.kind != TraitKind::text && trait.kind != TraitKind::category)
    ctx.expectation = expect_from_means(ctx.other_values, blocks, treatments, blocking_code(trial_.plan, target),
                                        combination_index(trial_.plan, target));
  return ctx;
}

EntryContext entry_context_for(const StoredTrial& t, const std::vector<LiveObservation>& live, size_t plot_index,
                               size_t trait_index, int occasion) {
  return TraitEntryContext(t, live, trait_index, occasion).for_plot(plot_index);
}

}  // namespace furrow
