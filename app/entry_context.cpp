#include "app/entry_context.h"

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

EntryContext entry_context_for(const StoredTrial& t, const std::vector<LiveObservation>& live, size_t plot_index,
                               size_t trait_index, int occasion) {
  EntryContext ctx;
  const std::int64_t plot_id = t.plot_ids[plot_index];
  const std::int64_t trait_id = t.trait_ids[trait_index];
  std::map<std::int64_t, size_t> index_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) index_of[t.plot_ids[i]] = i;
  std::vector<int> blocks, treatments;
  for (const auto& x : live) {
    if (x.trait_id != trait_id || x.occasion != occasion) continue;
    if (x.value && x.key.device_id == t.device_id) ctx.previous_entries.push_back(*x.value);
    if (x.plot_id == plot_id || !x.number) continue;
    const PlannedPlot& pp = t.layout.plots[index_of[x.plot_id]];
    ctx.other_values.push_back(*x.number);
    blocks.push_back(blocking_code(t.plan, pp));
    treatments.push_back(combination_index(t.plan, pp));
  }
  const Trait& trait = t.plan.traits[trait_index];
  const PlannedPlot& target = t.layout.plots[plot_index];
  if (trait.kind != TraitKind::text && trait.kind != TraitKind::category)
    ctx.expectation = expect_from_means(ctx.other_values, blocks, treatments, blocking_code(t.plan, target),
                                        combination_index(t.plan, target));
  return ctx;
}

}  // namespace furrow
