#include "storage/settle.h"

#include <algorithm>
#include <map>
#include <set>
#include <tuple>

namespace furrow {

Result<std::vector<ConflictCell>> list_conflicts(Database& db, const StoredTrial& t) {
  auto live = live_observations(db, 0);
  if (!live) return live.problem();
  std::map<std::int64_t, size_t> plot_of, trait_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) plot_of[t.plot_ids[i]] = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k) trait_of[t.trait_ids[k]] = k;
  std::map<std::tuple<size_t, size_t, int>, std::vector<LiveObservation>> cells;
  for (const auto& x : *live) cells[{plot_of.at(x.plot_id), trait_of.at(x.trait_id), x.occasion}].push_back(x);
  std::vector<ConflictCell> out;
  for (auto& [key, rows] : cells) {
    std::set<std::string> distinct;
    for (const auto& r : rows) distinct.insert(value_identity(r));
    if (distinct.size() < 2) continue;
    out.push_back({std::get<0>(key), std::get<1>(key), std::get<2>(key), std::move(rows)});
  }
  return out;
}

Result<ObservationKey> settle_conflict(Database& db, const StoredTrial& t, const ConflictCell& cell,
                                       const Settlement& s) {
  if (s.by.empty()) return make_problem("say who settles the conflict");
  auto now = list_conflicts(db, t);
  if (!now) return now.problem();
  const auto it = std::find_if(now->begin(), now->end(), [&](const ConflictCell& c) {
    return c.plot_index == cell.plot_index && c.trait_index == cell.trait_index && c.occasion == cell.occasion;
  });
  const std::string where = "plot " + t.layout.plots[cell.plot_index].label + ", " + t.plan.traits[cell.trait_index].code;
  if (it == now->end()) return make_problem(where + " is not in conflict (settled already?)");
  NewObservation o;
  o.plot_id = t.plot_ids[cell.plot_index];
  o.trait_id = t.trait_ids[cell.trait_index];
  o.occasion = cell.occasion;
  o.observer = s.by;
  for (const auto& r : it->rows) o.replaces.push_back(r.key);
  switch (s.kind) {
    case Settlement::Kind::keep: {
      const auto kept = std::find_if(it->rows.begin(), it->rows.end(), [&](const LiveObservation& r) {
        return r.key.device_id == s.keep.device_id && r.key.sequence == s.keep.sequence;
      });
      if (kept == it->rows.end())
        return make_problem(where + ": row " + s.keep.device_id + "/" + std::to_string(s.keep.sequence) +
                            " is not one of the disagreeing rows");
      o.value = kept->value;
      o.number = kept->number;
      o.missing_reason = kept->missing_reason;
      o.note = "settled: kept " + kept->observer + "'s record from device " + kept->key.device_id;
      break;
    }
    case Settlement::Kind::new_value:
      o.value = s.value;
      o.number = s.number;
      o.note = "settled: new value";
      break;
    case Settlement::Kind::missing:
      if (s.missing_reason.empty()) return make_problem(where + ": say why the value is missing");
      o.missing_reason = s.missing_reason;
      o.note = "settled: marked missing";
      break;
  }
  if (!s.note.empty()) o.note += "; " + s.note;
  return append_observation(db, t.device_id, o, utc_now());
}

}  // namespace furrow
