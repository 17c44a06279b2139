#include "app/work/before_leaving.h"

#include <algorithm>
#include <cstdio>
#include <map>
#include <set>
#include <tuple>

#include "app/work/entry_context.h"
#include "app/work/glossary.h"
#include "app/work/trial_analysis.h"

namespace furrow {

bool LeavingItem::has(Kind k) const { return std::find(kinds.begin(), kinds.end(), k) != kinds.end(); }

BeforeLeaving before_leaving(const StoredTrial& t, const std::vector<LiveObservation>& live, double alpha,
                             const Walk& walk) {
  BeforeLeaving out;
  std::map<std::int64_t, size_t> plot_of, trait_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) plot_of[t.plot_ids[i]] = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k) trait_of[t.trait_ids[k]] = k;
  using Cell = std::tuple<size_t, size_t, int>;   // plot, trait, occasion
  std::map<Cell, std::vector<const LiveObservation*>> cells;
  for (const auto& x : live) cells[{plot_of.at(x.plot_id), trait_of.at(x.trait_id), x.occasion}].push_back(&x);

  // Findings per cell, in the walk and outside it.
  struct Found {
    std::vector<LeavingItem::Kind> kinds;
    std::vector<std::string> words;
  };
  std::map<Cell, Found> found;
  auto add = [&](const Cell& c, LeavingItem::Kind k, std::string words) {
    Found& f = found[c];
    f.kinds.push_back(k);
    f.words.push_back(std::move(words));
  };
  for (const auto& [cell, rows] : cells) {
    std::set<std::string> distinct;
    for (const auto* r : rows) distinct.insert(value_identity(*r));
    if (distinct.size() > 1) {
      std::string values;
      for (const auto* r : rows) values += (values.empty() ? "" : " / ") + r->value.value_or("missing");
      add(cell, LeavingItem::Kind::conflict, std::string(term::kConflict) + ": devices disagree (" + values + ")");
    }
  }
  int outside_missing = 0;
  for (size_t k = 0; k < t.plan.traits.size(); ++k) {
    const Trait& trait = t.plan.traits[k];
    for (int occ = 1; occ <= trait.occasions; ++occ) {
      const TraitEntryContext contexts(t, live, k, occ);
      for (size_t p = 0; p < t.layout.plots.size(); ++p) {
        const Cell cell{p, k, occ};
        const auto it = cells.find(cell);
        const bool recorded = it != cells.end() && std::any_of(it->second.begin(), it->second.end(), [](const auto* r) {
          return r->value || (r->missing_reason && *r->missing_reason != kWithdrawnReason);
        });
        if (!recorded) {
          if (walk.contains(p, k, occ)) add(cell, LeavingItem::Kind::missing, "not recorded yet");
          else if (trait.required) ++outside_missing;
          continue;
        }
        if (it->second.size() != 1 || !it->second.front()->value) continue;
        const LiveObservation& row = *it->second.front();
        const EntryContext ctx = contexts.for_saved_value(p);
        for (const Finding& f : check_entry(trait, *row.value, ctx)) {
          if (f.severity != Severity::confirm || has_check(row.confirmed_checks, f.check)) continue;
          add(cell, LeavingItem::Kind::flagged, std::string(term::kValueToCheck) + ": " + f.message);
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
        if (it != cells.end() && it->second.size() == 1 && has_check(it->second.front()->confirmed_checks, kOutlierCheck))
          continue;
        char buf[200];
        std::snprintf(buf, sizeof buf, "%s: %g is far from what the other plots predict (%.4g); re-measure, or confirm it",
                      term::kOutlierPlot, o.value, o.expected);
        add({p, k, occ}, LeavingItem::Kind::outlier, buf);
      }
    }
  }

  // One line per cell of the walk; the rest counted in one line.
  int outside_check = 0, outside_conflict = 0;
  std::vector<std::pair<size_t, LeavingItem>> lines;   // (walk place, line)
  for (auto& [cell, f] : found) {
    const auto [p, k, occ] = cell;
    const auto place = walk.index_of(p, k, occ);
    if (!place) {
      for (auto kind : f.kinds) {
        if (kind == LeavingItem::Kind::conflict) ++outside_conflict;
        else if (kind != LeavingItem::Kind::missing) ++outside_check;
      }
      continue;
    }
    // Most serious first.
    std::vector<size_t> order(f.kinds.size());
    for (size_t i = 0; i < order.size(); ++i) order[i] = i;
    std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) { return f.kinds[a] < f.kinds[b]; });
    LeavingItem item;
    item.plot_index = p;
    item.trait_index = k;
    item.occasion = occ;
    const Trait& trait = t.plan.traits[k];
    item.message = "plot " + t.layout.plots[p].label + ", " + trait.name +
                   (trait.occasions > 1 ? " (occasion " + std::to_string(occ) + ")" : "") + ": ";
    for (size_t i = 0; i < order.size(); ++i) {
      item.kinds.push_back(f.kinds[order[i]]);
      item.message += (i ? "; " : "") + f.words[order[i]];
      switch (f.kinds[order[i]]) {
        case LeavingItem::Kind::conflict: ++out.conflicts; break;
        case LeavingItem::Kind::outlier: ++out.outliers; break;
        case LeavingItem::Kind::flagged: ++out.flagged; break;
        case LeavingItem::Kind::missing: ++out.missing; break;
      }
    }
    lines.emplace_back(*place, std::move(item));
  }
  std::stable_sort(lines.begin(), lines.end(), [](const auto& a, const auto& b) {
    const auto group = [](const LeavingItem& i) {
      return i.has(LeavingItem::Kind::conflict) ? 0 : i.kinds.front() == LeavingItem::Kind::missing ? 2 : 1;
    };
    if (group(a.second) != group(b.second)) return group(a.second) < group(b.second);
    return a.first < b.first;
  });
  for (auto& [place, item] : lines) out.items.push_back(std::move(item));

  std::vector<std::string> parts;
  if (outside_missing) parts.push_back(count_of(outside_missing, "required value") + " not recorded yet");
  if (outside_check) parts.push_back(count_of(outside_check, term::kValueToCheck));
  if (outside_conflict) parts.push_back(count_of(outside_conflict, term::kConflict));
  if (!parts.empty()) {
    out.outside_walk = "Outside today's walk: ";
    for (size_t i = 0; i < parts.size(); ++i) out.outside_walk += (i ? ", " : "") + parts[i];
  }
  return out;
}

}  // namespace furrow
