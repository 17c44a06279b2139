#include "app/work/record_session.h"

#include "core/stake_code.h"

#include <algorithm>
#include <cassert>
#include <map>
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
  auto choice = load_walk_choice(s.open_.db);
  if (!choice) return choice.problem();
  s.walk_ = Walk(s.open_.trial, *choice);
  s.go_to_first_open();
  return s;
}

namespace {
Result<std::int64_t> data_version(Database& db) {
  auto v = db.prepare("PRAGMA data_version");
  if (!v) return v.problem();
  if (!v->step()) return make_problem(v->error());
  return v->integer(0);
}
}  // namespace

Status RecordSession::reload() {
  auto version = data_version(open_.db);
  if (!version) return version.problem();
  auto live = live_observations(open_.db, 0);
  if (!live) return live.problem();
  live_ = std::move(live).value();
  // Today's walk too: `furrow walk` may have changed it.
  if (auto choice = load_walk_choice(open_.db); choice && !choice->trait_codes.empty()) {
    walk_ = Walk(open_.trial, *choice);
    progress_.reset();
  }
  data_version_ = *version;
  ++revision_;
  return ok_status();
}

Result<bool> RecordSession::refresh_if_changed() {
  auto version = data_version(open_.db);
  if (!version) return version.problem();
  if (*version == data_version_) return false;
  if (auto s = reload(); !s) return s.problem();
  return true;
}

std::vector<ObservationKey> RecordSession::own_live_keys(std::int64_t plot_id, std::int64_t trait_id, int occasion) const {
  std::vector<ObservationKey> keys;
  for (const auto& x : live_)
    if (x.plot_id == plot_id && x.trait_id == trait_id && x.occasion == occasion && x.key.device_id == open_.trial.device_id)
      keys.push_back(x.key);
  return keys;
}

Result<ObservationKey> RecordSession::save_row(NewObservation o) {
  // A new measurement is the current observer's; a re-saved one (a note, a
  // "value is right", an undo) keeps who measured it.
  if (o.observer.empty()) o.observer = observer_;
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
                   recorded_at, o.confirmed_checks});
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


bool RecordSession::cell_recorded(size_t plot, size_t trait, int occasion) const {
  const StoredTrial& t = open_.trial;
  for (const auto& x : live_)
    if (x.plot_id == t.plot_ids[plot] && x.trait_id == t.trait_ids[trait] && x.occasion == occasion &&
        (x.value || (x.missing_reason && *x.missing_reason != kWithdrawnReason)))
      return true;
  return false;
}

void RecordSession::go_to(const WalkCell& c) {
  plot_ = c.plot;
  trait_ = c.trait;
  occasion_ = c.occasion;
}

void RecordSession::go_to_first_open() {
  for (size_t k = 0; k < walk_.size(); ++k) {
    const WalkCell c = walk_.at(k);
    if (!cell_recorded(c.plot, c.trait, c.occasion)) {
      go_to(c);
      return;
    }
  }
  if (walk_.size() > 0) go_to(walk_.at(0));
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
  v.occasions = tr.occasions;
  std::map<std::string, std::string> values;   // identity -> shown
  for (const auto& x : live_)
    if (x.plot_id == t.plot_ids[plot_] && x.trait_id == t.trait_ids[trait_] && x.occasion == occasion_) {
      values.emplace(value_identity(x), x.value ? *x.value : "missing: " + x.missing_reason.value_or(""));
      if (!x.note.empty()) v.note = x.note;
    }
  if (values.size() == 1) v.current = values.begin()->second;
  else if (values.size() > 1) v.current = "CONFLICT";
  v.typed = typed_;
  v.has_pending = pending_.has_value() && !pending_->refused;
  v.suggestion = pending_ ? pending_->suggestion : "";
  v.notice = notice_;
  v.pending_note = note_;
  // The walk's progress, counted once per change of the log or the walk.
  if (!progress_ || progress_->first != revision_) progress_.emplace(revision_, walk_progress());
  const WalkProgress& w = progress_->second;
  v.in_walk = walk_.contains(plot_, trait_, occasion_);
  v.walk_plots = static_cast<int>(walk_.plots().size());
  const auto& wp = walk_.plots();
  const auto at = std::lower_bound(wp.begin(), wp.end(), plot_);
  v.walk_position = static_cast<int>(at - wp.begin()) + (at != wp.end() && *at == plot_ ? 1 : 0);
  v.trait_total = walk_.has_trait(trait_) ? static_cast<int>(wp.size()) : 0;
  v.trait_done = walk_.has_trait(trait_) ? w.done_per_trait[trait_] : 0;
  v.walk_done = w.done;
  v.walk_total = static_cast<int>(walk_.size());
  v.walk_complete = v.walk_done == v.walk_total;
  v.walk_summary = walk_.describe(t);
  return v;
}

RecordSession::WalkProgress RecordSession::walk_progress() const {
  const StoredTrial& t = open_.trial;
  WalkProgress w;
  w.done_per_trait.assign(t.plan.traits.size(), 0);
  std::map<std::int64_t, size_t> plot_of, trait_of;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) plot_of[t.plot_ids[i]] = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k) trait_of[t.trait_ids[k]] = k;
  std::set<std::tuple<size_t, size_t, int>> counted;
  for (const auto& x : live_) {
    if (!x.value && !(x.missing_reason && *x.missing_reason != kWithdrawnReason)) continue;
    const size_t p = plot_of.at(x.plot_id), k = trait_of.at(x.trait_id);
    if (!walk_.contains(p, k, x.occasion) || !counted.insert({p, k, x.occasion}).second) continue;
    ++w.done;
    ++w.done_per_trait[k];
  }
  return w;
}

BeforeLeaving RecordSession::before_leaving(double alpha) const {
  return furrow::before_leaving(open_.trial, live_, alpha, walk_);
}

// --- The value being entered (E1-E4) ---------------------------------------

void RecordSession::type(const std::string& keys) {
  typed_ += keys;
  pending_.reset();   // E2: the text asked about is no longer on screen
  notice_.clear();
}

void RecordSession::erase() {
  if (!typed_.empty()) {
    // One character back, whole UTF-8 sequences at a time.
    size_t n = typed_.size() - 1;
    while (n > 0 && (static_cast<unsigned char>(typed_[n]) & 0xC0) == 0x80) --n;
    typed_.erase(n);
  }
  pending_.reset();   // E2
  notice_.clear();
}

void RecordSession::drop_entry() {
  const std::string plot = open_.trial.layout.plots[plot_].label;
  if (!typed_.empty()) notice_ = typed_ + " typed on plot " + plot + " was not saved";
  if (!note_.empty())
    notice_ += (notice_.empty() ? "" : "; ") + std::string("the note for plot ") + plot + " (\"" + note_ +
               "\") was not saved: it waits for a value or a skip";
  typed_.clear();
  pending_.reset();
  note_.clear();
}

void RecordSession::leave_cell() { drop_entry(); }

namespace {
// The banner's words: what happened, then every finding in order.
std::string with_findings(std::string head, const std::vector<Finding>& findings) {
  for (const Finding& f : findings) head += (head.empty() ? "" : "\n") + f.message;
  return head;
}
}  // namespace

EntryOutcome RecordSession::save() { return check_and_save(false); }

EntryOutcome RecordSession::enter(const std::string& text) {
  typed_ = text;
  pending_.reset();
  notice_.clear();
  return check_and_save(false);
}

EntryOutcome RecordSession::confirm() {
  EntryOutcome out;
  // E2: Confirm answers the question about exactly the text on screen.
  if (!pending_ || pending_->text != typed_ || pending_->refused) {
    pending_.reset();
    out.message = "there is no value waiting for confirmation";
    return out;
  }
  return check_and_save(true);
}

EntryOutcome RecordSession::save_suggestion() {
  EntryOutcome out;
  if (!pending_ || pending_->text != typed_ || pending_->suggestion.empty()) {
    out.message = "there is no suggested value to save";
    return out;
  }
  typed_ = pending_->suggestion;   // E4: on screen, then checked like any entry
  pending_.reset();
  return check_and_save(false);
}

EntryOutcome RecordSession::check_and_save(bool confirmed) {
  EntryOutcome out;
  notice_.clear();
  const std::string text = typed_;
  if (text.empty()) {
    out.message = "type a value first";
    return out;
  }
  const StoredTrial& t = open_.trial;
  const EntryContext ctx = entry_context_for(t, live_, plot_, trait_, occasion_);
  out.findings = check_entry(t.plan.traits[trait_], text, ctx);
  const auto w = worst(out.findings);
  if (w == Severity::refuse) {
    pending_.reset();
    // A value refused for its range may still be a likely slip: offer the
    // value probably meant (E4), never a Confirm.
    for (const Finding& f : out.findings)
      if (!f.suggestion.empty() && f.suggestion != text) pending_ = Pending{text, f.suggestion, true};
    out.kind = EntryOutcome::Kind::refused;
    out.message = with_findings("not saved:", out.findings);
    return out;
  }
  if (w == Severity::confirm && !confirmed) {
    Pending p{text, {}};
    for (const Finding& f : out.findings)
      if (!f.suggestion.empty() && f.suggestion != text) {
        p.suggestion = f.suggestion;
        break;
      }
    pending_ = p;
    out.kind = EntryOutcome::Kind::needs_confirmation;
    out.message = with_findings("check " + text + " before it is saved:", out.findings);
    return out;
  }
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
  o.note = note_;
  if (confirmed)
    for (const Finding& f : out.findings)
      if (f.severity == Severity::confirm && !has_check(o.confirmed_checks, f.check))
        o.confirmed_checks += (o.confirmed_checks.empty() ? "" : ",") + f.check;
  o.replaces = own_live_keys(o.plot_id, o.trait_id, o.occasion);
  remember(o.plot_id, o.trait_id, o.occasion);
  auto key = save_row(o);
  if (!key) {
    undo_.pop_back();
    pending_.reset();
    out.message = "NOT SAVED: " + key.problem().message;
    return out;
  }
  out.kind = EntryOutcome::Kind::saved;
  std::vector<Finding> notes;
  for (const Finding& f : out.findings)
    if (f.severity == Severity::note) notes.push_back(f);
  out.message = with_findings("saved plot " + t.layout.plots[plot_].label + ", " + t.plan.traits[trait_].name +
                                  (t.plan.traits[trait_].occasions > 1 ? " (occasion " + std::to_string(occasion_) + ")"
                                                                        : std::string()) +
                                  " = " + parsed->text + (o.confirmed_checks.empty() ? "" : " (confirmed)"),
                              notes);
  typed_.clear();
  pending_.reset();
  note_.clear();
  advance();
  return out;
}

// --- Other commands -----------------------------------------------------------

Status RecordSession::skip(const std::string& reason, const std::string& note) {
  if (std::find(kSkipReasons.begin(), kSkipReasons.end(), reason) == kSkipReasons.end())
    return make_problem("'" + reason + "' is not one of the skip reasons");
  if (reason == "other" && note.empty() && note_.empty()) return make_problem("say why in a note when the reason is 'other'");
  return record_missing(reason, note);
}

Status RecordSession::record_missing(const std::string& reason, const std::string& note) {
  if (reason.empty()) return make_problem("give the reason there is no value");
  const StoredTrial& t = open_.trial;
  NewObservation o;
  o.plot_id = t.plot_ids[plot_];
  o.trait_id = t.trait_ids[trait_];
  o.occasion = occasion_;
  o.missing_reason = reason;
  o.note = note.empty() ? note_ : note;
  o.replaces = own_live_keys(o.plot_id, o.trait_id, o.occasion);
  remember(o.plot_id, o.trait_id, o.occasion);
  auto key = save_row(o);
  if (!key) {
    undo_.pop_back();
    return key.problem();
  }
  drop_entry();   // E1: a typed value is not what was saved
  note_.clear();
  advance();
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
    o.confirmed_checks = x.confirmed_checks;
    o.observer = x.observer;
    o.replaces = {x.key};
    auto key = save_row(o);
    if (!key) return key.problem();
    return ok_status();
  }
  note_ = note;   // saved with the cell's next value or skip
  return ok_status();
}

Status RecordSession::confirm_saved(const std::string& check) {
  const StoredTrial& t = open_.trial;
  std::optional<LiveObservation> row;
  int rows = 0;
  for (const auto& x : live_)
    if (x.plot_id == t.plot_ids[plot_] && x.trait_id == t.trait_ids[trait_] && x.occasion == occasion_) {
      row = x;
      ++rows;
    }
  if (rows != 1 || !row->value) return make_problem("this plot has no single saved value to confirm");
  // The question answered is the outlier's and every entry check's that
  // still asks about this value.
  std::string checks = row->confirmed_checks;
  const auto add_check = [&](const std::string& key) {
    if (!has_check(checks, key)) checks += (checks.empty() ? "" : ",") + key;
  };
  add_check(check);
  for (const Finding& f : check_entry(t.plan.traits[trait_], *row->value,
                                      TraitEntryContext(t, live_, trait_, occasion_).for_saved_value(plot_)))
    if (f.severity == Severity::confirm) add_check(f.check);
  if (checks == row->confirmed_checks) return ok_status();
  drop_entry();
  NewObservation o;
  o.plot_id = row->plot_id;
  o.trait_id = row->trait_id;
  o.occasion = row->occasion;
  o.value = row->value;
  o.number = row->number;
  o.note = row->note;
  o.confirmed_checks = checks;
  o.observer = row->observer;
  o.replaces = {row->key};
  remember(o.plot_id, o.trait_id, o.occasion);
  auto key = save_row(o);
  if (!key) {
    undo_.pop_back();
    return key.problem();
  }
  return ok_status();
}

Status RecordSession::undo() {
  if (undo_.empty()) return make_problem("nothing to undo in this session");
  leave_cell();
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
    o.confirmed_checks = step.before->confirmed_checks;
    o.observer = step.before->observer;
  } else {
    o.missing_reason = kWithdrawnReason;
  }
  auto key = save_row(o);
  if (!key) return key.problem();
  undo_.pop_back();
  for (size_t i = 0; i < t.plot_ids.size(); ++i)
    if (t.plot_ids[i] == o.plot_id) plot_ = i;
  for (size_t k = 0; k < t.trait_ids.size(); ++k)
    if (t.trait_ids[k] == o.trait_id) trait_ = k;
  occasion_ = o.occasion;
  return ok_status();
}

void RecordSession::advance() {
  if (auto c = walk_.after({plot_, trait_, occasion_}, open_.trial.layout.plots.size())) go_to(*c);
}

void RecordSession::next() {
  // At the end of the walk there is nowhere to go: the cell, and what is
  // typed in it, stay.
  if (auto c = walk_.after({plot_, trait_, occasion_}, open_.trial.layout.plots.size())) {
    leave_cell();
    go_to(*c);
  }
}

void RecordSession::previous() {
  if (auto c = walk_.before({plot_, trait_, occasion_})) {
    leave_cell();
    go_to(*c);
  }
}

Status RecordSession::jump_to(const std::string& label) {
  std::string l = label;
  // A stake's code (scanned): this trial's opens its plot; another's is refused by name.
  if (const auto code = read_stake_code(label)) {
    if (code->trial_uid != open_.trial.uid)
      return make_problem(stake_of_other_trial(*code, open_.trial.plan.name));
    l = code->plot_label;
  }
  while (!l.empty() && std::isspace(static_cast<unsigned char>(l.back()))) l.pop_back();
  while (!l.empty() && std::isspace(static_cast<unsigned char>(l.front()))) l.erase(0, 1);
  const auto& plots = open_.trial.layout.plots;
  for (size_t i = 0; i < plots.size(); ++i)
    if (plots[i].label == l) {
      if (i != plot_) leave_cell();
      plot_ = i;
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
    return make_problem(trait.code + " has " + std::to_string(trait.occasions) +
                        (trait.occasions == 1 ? " occasion; " : " occasions; ") + std::to_string(occasion) +
                        " is not one of them");
  if (occasion != occasion_) leave_cell();
  occasion_ = occasion;
  return ok_status();
}

void RecordSession::set_trait(size_t index) {
  assert(index < open_.trial.plan.traits.size());
  if (index != trait_) leave_cell();
  trait_ = index;
  occasion_ = walk_.has_trait(index) ? walk_.occasion_for(index) : 1;
}

Status RecordSession::set_walk(const WalkChoice& choice) {
  Walk w(open_.trial, choice);
  bool named = false;
  for (const std::string& code : choice.trait_codes)
    for (const Trait& tr : open_.trial.plan.traits) named = named || tr.code == code;
  if (!named) return make_problem("choose at least one trait of this trial for the walk");
  if (auto s = save_walk_choice(open_.db, w.choice(open_.trial)); !s) return s.problem();
  WalkCell before{plot_, trait_, occasion_};
  walk_ = std::move(w);
  progress_.reset();
  go_to_first_open();
  if (!(before == WalkCell{plot_, trait_, occasion_})) {
    // E1: the walk moved the crew to another cell.
    std::swap(plot_, before.plot);
    drop_entry();
    std::swap(plot_, before.plot);
  }
  return ok_status();
}

void RecordSession::set_every_trait_per_plot(bool on) {
  WalkChoice c = walk_.choice(open_.trial);
  c.every_trait_per_plot = on;
  (void)set_walk(c);
}

}  // namespace furrow
