#include "app/work/record_session.h"

#include <algorithm>
#include <cstdio>
#include <set>
#include <tuple>
#include <utility>

#include "app/work/entry_context.h"
#include "app/work/trial_summary.h"

namespace furrow {

Result<RecordSession> RecordSession::open(const std::string& db_path, const std::string& observer) {
  if (observer.empty()) return make_problem("say who is measuring: an observer name is needed");
  auto open = open_trial_database(db_path);
  if (!open) return open.problem();
  RecordSession s(std::move(open).value());
  s.observer_ = observer;
  if (auto r = s.reload(); !r) return r.problem();
  return s;
}

Status RecordSession::reload() {
  auto live = live_observations(open_.db, 0);
  if (!live) return live.problem();
  live_ = std::move(live).value();
  ++revision_;
  return ok_status();
}

std::vector<ObservationKey> RecordSession::own_live_keys(std::int64_t plot_id, std::int64_t trait_id, int occasion) const {
  std::vector<ObservationKey> keys;
  for (const auto& x : live_)
    if (x.plot_id == plot_id && x.trait_id == trait_id && x.occasion == occasion && x.key.device_id == open_.trial.device_id)
      keys.push_back(x.key);
  return keys;
}

Result<ObservationKey> RecordSession::save(NewObservation o) {
  o.observer = observer_;
  const std::string recorded_at = utc_now();
  ObservationWriter writer(open_.db);
  auto key = writer.append(open_.trial.device_id, o, recorded_at);
  if (!key) return key.problem();
  // Keep the cached live rows in step with the log instead of reading them
  // all again after every entry: the replaced rows leave, the new one joins.
  live_.erase(std::remove_if(live_.begin(), live_.end(),
                             [&](const LiveObservation& x) {
                               return std::any_of(o.replaces.begin(), o.replaces.end(), [&](const ObservationKey& r) {
                                 return r.device_id == x.key.device_id && r.sequence == x.key.sequence;
                               });
                             }),
              live_.end());
  live_.push_back({*key, o.plot_id, o.trait_id, o.occasion, o.value, o.number, o.missing_reason, o.note, o.observer,
                   recorded_at});
  ++revision_;
  return key;
}

namespace {
// This device's live row of a cell, if any.
std::optional<LiveObservation> own_live(const std::vector<LiveObservation>& live, const std::string& device,
                                        std::int64_t plot_id, std::int64_t trait_id, int occasion) {
  for (const auto& x : live)
    if (x.plot_id == plot_id && x.trait_id == trait_id && x.occasion == occasion && x.key.device_id == device) return x;
  return std::nullopt;
}
}  // namespace

void RecordSession::remember(std::int64_t plot_id, std::int64_t trait_id, int occasion) {
  undo_.push_back({plot_id, trait_id, occasion, own_live(live_, open_.trial.device_id, plot_id, trait_id, occasion)});
}

RecordView RecordSession::view() const {
  const StoredTrial& t = open_.trial;
  RecordView v;
  const PlannedPlot& p = t.layout.plots[plot_];
  const Trait& tr = t.plan.traits[trait_];
  v.plot_label = p.label;
  v.site = t.plan.sites.empty() ? "" : t.plan.sites[p.site];
  v.block = p.block;
  v.row = p.row;
  v.column = p.column;
  v.treatment = blind_ ? "hidden" : treatment_label(t.plan, p.levels);
  v.trait_code = tr.code;
  v.trait_name = tr.name;
  v.unit = tr.unit;
  auto num = [](double x) {
    char b[32];
    std::snprintf(b, sizeof b, "%g", x);
    return std::string(b);
  };
  if (tr.kind == TraitKind::score) v.limits = std::to_string(tr.scale_min) + "-" + std::to_string(tr.scale_max);
  else if (tr.kind == TraitKind::category) {
    for (const auto& c : tr.categories) v.limits += (v.limits.empty() ? "" : " / ") + c;
  } else if (tr.soft_min || tr.soft_max)
    v.limits = "usually " + (tr.soft_min ? num(*tr.soft_min) : std::string("")) + " to " +
               (tr.soft_max ? num(*tr.soft_max) : std::string(""));
  v.occasion = occasion_;
  std::set<std::string> values;
  for (const auto& x : live_)
    if (x.plot_id == t.plot_ids[plot_] && x.trait_id == t.trait_ids[trait_] && x.occasion == occasion_)
      values.insert(x.value ? *x.value : "missing: " + x.missing_reason.value_or(""));
  if (values.size() == 1) v.current = *values.begin();
  else if (values.size() > 1) v.current = "CONFLICT";
  v.position = static_cast<int>(plot_) + 1;
  v.plots = static_cast<int>(t.layout.plots.size());
  // Counted once per change of the log, not once per drawn frame.
  if (!progress_ || progress_->first != revision_) progress_.emplace(revision_, trial_progress(t, live_));
  v.cells_done = progress_->second.cells_done;
  v.cells_required = progress_->second.cells_required;
  v.has_pending = pending_.has_value();
  return v;
}

BeforeLeaving RecordSession::before_leaving(double alpha) const {
  return furrow::before_leaving(open_.trial, live_, alpha);
}

EntryOutcome RecordSession::enter(const std::string& text) {
  pending_.reset();
  const StoredTrial& t = open_.trial;
  const EntryContext ctx = entry_context_for(t, live_, plot_, trait_, occasion_);
  EntryOutcome out;
  out.findings = check_entry(t.plan.traits[trait_], text, ctx);
  const auto w = worst(out.findings);
  if (w == Severity::refuse) {
    out.kind = EntryOutcome::Kind::refused;
    out.message = out.findings.front().message;
    return out;
  }
  if (w == Severity::confirm) {
    pending_ = text;
    out.kind = EntryOutcome::Kind::needs_confirmation;
    out.message = out.findings.front().message;
    return out;
  }
  auto confirmed = confirm_value(text);
  confirmed.findings = out.findings;
  return confirmed;
}

EntryOutcome RecordSession::confirm() {
  EntryOutcome out;
  if (!pending_) {
    out.message = "there is no value waiting for confirmation";
    return out;
  }
  const std::string text = *pending_;
  pending_.reset();
  return confirm_value(text);
}

EntryOutcome RecordSession::confirm_value(const std::string& text) {
  EntryOutcome out;
  const StoredTrial& t = open_.trial;
  const auto parsed = parse_trait_value(t.plan.traits[trait_], text);
  if (!parsed) {
    out.message = parsed.problem().message;
    return out;
  }
  NewObservation o;
  o.plot_id = t.plot_ids[plot_];
  o.trait_id = t.trait_ids[trait_];
  o.occasion = occasion_;
  o.value = parsed->text;
  o.number = parsed->number;
  o.note = std::exchange(note_, {});
  o.replaces = own_live_keys(o.plot_id, o.trait_id, o.occasion);
  remember(o.plot_id, o.trait_id, o.occasion);
  auto key = save(o);
  if (!key) {
    undo_.pop_back();
    out.message = "not saved: " + key.problem().message;
    return out;
  }
  out.kind = EntryOutcome::Kind::saved;
  out.message = "saved " + t.layout.plots[plot_].label + " " + t.plan.traits[trait_].code + " = " + parsed->text;
  next();
  return out;
}

Status RecordSession::skip(const std::string& reason, const std::string& note) {
  if (std::find(kSkipReasons.begin(), kSkipReasons.end(), reason) == kSkipReasons.end())
    return make_problem("'" + reason + "' is not one of the skip reasons");
  if (reason == "other" && note.empty()) return make_problem("say why in a note when the reason is 'other'");
  return record_missing(reason, note);
}

Status RecordSession::record_missing(const std::string& reason, const std::string& note) {
  if (reason.empty()) return make_problem("give the reason there is no value");
  pending_.reset();
  const StoredTrial& t = open_.trial;
  NewObservation o;
  o.plot_id = t.plot_ids[plot_];
  o.trait_id = t.trait_ids[trait_];
  o.occasion = occasion_;
  o.missing_reason = reason;
  o.note = note.empty() ? std::exchange(note_, {}) : note;
  o.replaces = own_live_keys(o.plot_id, o.trait_id, o.occasion);
  remember(o.plot_id, o.trait_id, o.occasion);
  auto key = save(o);
  if (!key) {
    undo_.pop_back();
    return key.problem();
  }
  next();
  return ok_status();
}

Status RecordSession::add_note(const std::string& note) {
  const StoredTrial& t = open_.trial;
  for (const auto& x : live_) {
    if (x.plot_id != t.plot_ids[plot_] || x.trait_id != t.trait_ids[trait_] || x.occasion != occasion_ ||
        x.key.device_id != t.device_id)
      continue;
    NewObservation o;
    o.plot_id = x.plot_id;
    o.trait_id = x.trait_id;
    o.occasion = x.occasion;
    o.value = x.value;
    o.number = x.number;
    o.missing_reason = x.missing_reason;
    o.note = note;
    o.replaces = {x.key};
    auto key = save(o);
    if (!key) return key.problem();
    return ok_status();
  }
  return make_problem("enter a value or skip the plot before adding a note");
}

Status RecordSession::undo() {
  pending_.reset();
  if (undo_.empty()) return make_problem("nothing to undo in this session");
  const UndoStep step = undo_.back();
  const StoredTrial& t = open_.trial;
  NewObservation o;
  o.plot_id = step.plot_id;
  o.trait_id = step.trait_id;
  o.occasion = step.occasion;
  o.replaces = own_live_keys(step.plot_id, step.trait_id, step.occasion);
  if (step.before) {
    o.value = step.before->value;
    o.number = step.before->number;
    o.missing_reason = step.before->missing_reason;
    o.note = step.before->note;
  } else {
    o.missing_reason = "withdrawn";
  }
  auto key = save(o);
  if (!key) return key.problem();
  undo_.pop_back();
  for (size_t i = 0; i < t.plot_ids.size(); ++i)
    if (t.plot_ids[i] == o.plot_id) plot_ = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k)
    if (t.trait_ids[k] == o.trait_id) trait_ = k;
  occasion_ = o.occasion;
  return ok_status();
}

void RecordSession::next() {
  const size_t plots = open_.trial.layout.plots.size();
  if (walk_ == WalkMode::all_traits_per_plot && trait_ + 1 < open_.trial.plan.traits.size()) {
    ++trait_;
    return;
  }
  if (walk_ == WalkMode::all_traits_per_plot) trait_ = 0;
  if (plot_ + 1 < plots) ++plot_;
}

void RecordSession::previous() {
  if (walk_ == WalkMode::all_traits_per_plot && trait_ > 0) {
    --trait_;
    return;
  }
  if (plot_ > 0) {
    --plot_;
    if (walk_ == WalkMode::all_traits_per_plot) trait_ = open_.trial.plan.traits.size() - 1;
  }
}

Status RecordSession::jump_to(const std::string& label) {
  std::string l = label;
  while (!l.empty() && std::isspace(static_cast<unsigned char>(l.back()))) l.pop_back();
  while (!l.empty() && std::isspace(static_cast<unsigned char>(l.front()))) l.erase(0, 1);
  const auto& plots = open_.trial.layout.plots;
  for (size_t i = 0; i < plots.size(); ++i)
    if (plots[i].label == l) {
      plot_ = i;
      pending_.reset();
      return ok_status();
    }
  return make_problem("plot '" + l + "' is not in the plan of this trial");
}

Status RecordSession::set_trait(const std::string& code) {
  const auto& traits = open_.trial.plan.traits;
  for (size_t k = 0; k < traits.size(); ++k)
    if (traits[k].code == code) {
      set_trait(k);
      return ok_status();
    }
  return make_problem("trait '" + code + "' is not measured in this trial");
}

Status RecordSession::set_occasion(int occasion) {
  const Trait& trait = open_.trial.plan.traits[trait_];
  if (occasion < 1 || occasion > trait.occasions)
    return make_problem(trait.code + " has " + std::to_string(trait.occasions) + " occasion(s); " +
                        std::to_string(occasion) + " is not one of them");
  occasion_ = occasion;
  pending_.reset();
  return ok_status();
}

void RecordSession::set_trait(size_t index) {
  assert(index < open_.trial.plan.traits.size());
  trait_ = index;
  occasion_ = 1;
  pending_.reset();
}

}  // namespace furrow
