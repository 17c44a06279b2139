#include "app/work/before_leaving.h"

#include <algorithm>
#include <map>
#include <set>
#include <tuple>

#include "app/work/entry_context.h"
#include "app/work/trial_analysis.h"

namespace furrow {

BeforeLeaving before_leaving(const StoredTrial& t, const std::vector<LiveObservation>& live, double alpha) {
  BeforeLeaving out;
  std::map<std::int64_t, size_t> plot_of, trait_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) plot_of[t.plot_ids[i]] = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k) trait_of[t.trait_ids[k]] = k;
  using Cell = std::tuple<size_t, size_t, int>;   // plot, trait, occasion
  std::map<Cell, std::vector<const LiveObservation*>> cells;
  for (const auto& x : live) cells[{plot_of.at(x.plot_id), trait_of.at(x.trait_id), x.occasion}].push_back(&x);
  std::vector<LeavingItem> conflicts, outliers, flagged, missing;
  auto label = [&](size_t plot, size_t trait) {
    return "plot " + t.layout.plots[plot].label + ", " + t.plan.traits[trait].name;
  };
  auto confirmed = [](const LiveObservation& x) { return x.note.find(kConfirmedNote) != std::string::npos; };
  for (const auto& [cell, rows] : cells) {
    std::set<std::string> distinct;
    for (const auto* r : rows) distinct.insert(r->value.value_or("") + "\x1f" + r->missing_reason.value_or(""));
    if (distinct.size() > 1) {
      const auto [plot, trait, occasion] = cell;
      std::string values;
      for (const auto* r : rows) values += (values.empty() ? "" : " / ") + r->value.value_or("missing");
      conflicts.push_back({LeavingItem::Kind::conflict, plot, trait, occasion,
                           label(plot, trait) + ": devices disagree (" + values + ")"});
    }
  }
  for (size_t k = 0; k < t.plan.traits.size(); ++k) {
    const Trait& trait = t.plan.traits[k];
    for (int occ = 1; occ <= trait.occasions; ++occ) {
      const TraitEntryContext contexts(t, live, k, occ);
      for (size_t p = 0; p < t.layout.plots.size(); ++p) {
        const auto it = cells.find({p, k, occ});
        const bool recorded = it != cells.end() && std::any_of(it->second.begin(), it->second.end(), [](const auto* r) {
          return r->value || (r->missing_reason && *r->missing_reason != "withdrawn");
        });
        if (!recorded) {
          if (trait.required)
            missing.push_back({LeavingItem::Kind::missing, p, k, occ, label(p, k) + ": not recorded yet"});
          continue;
        }
        if (it->second.size() != 1 || !it->second.front()->value || confirmed(*it->second.front())) continue;
        const EntryContext ctx = contexts.for_saved_value(p);
        for (const Finding& f : check_entry(trait, *it->second.front()->value, ctx)) {
          if (f.severity != Severity::confirm) continue;
          flagged.push_back({LeavingItem::Kind::flagged, p, k, occ, label(p, k) + ": " + f.message});
          break;
        }
      }
      AnalysisOptions options;
      options.alpha = alpha;
      options.comparisons = false;
      const auto a = analyse_trial_trait(t, live, k, occ, options);
      if (!a) continue;   // too little data or a text trait: nothing to say yet
      for (const OutlierPlot& o : a->outliers) {
        const size_t p = static_cast<size_t>(o.record);
        const auto it = cells.find({p, k, occ});
        if (it != cells.end() && it->second.size() == 1 && confirmed(*it->second.front())) continue;
        char buf[160];
        std::snprintf(buf, sizeof buf, ": %g is far from what the other plots predict (%.4g); re-measure or confirm",
                      o.value, o.expected);
        outliers.push_back({LeavingItem::Kind::outlier, p, k, occ, label(p, k) + buf});
      }
    }
  }
  auto walk = [](std::vector<LeavingItem>& v) {
    std::stable_sort(v.begin(), v.end(), [](const LeavingItem& a, const LeavingItem& b) { return a.plot_index < b.plot_index; });
  };
  for (auto* v : {&conflicts, &outliers, &flagged, &missing}) walk(*v);
  out.conflicts = static_cast<int>(conflicts.size());
  out.outliers = static_cast<int>(outliers.size());
  out.flagged = static_cast<int>(flagged.size());
  out.missing = static_cast<int>(missing.size());
  for (auto* v : {&conflicts, &outliers, &flagged, &missing}) out.items.insert(out.items.end(), v->begin(), v->end());
  return out;
}

}  // namespace furrow
