#include "app/work/sheet_entry.h"
#include "core/text.h"

#include <algorithm>
#include <cctype>
#include <map>
#include <optional>
#include <set>
#include <sstream>

#include "core/stake_code.h"
#include "storage/csv_table.h"
#include "storage/plan_file.h"

namespace furrow {

const char* sheet_item_key(SheetItem::Kind k) {
  switch (k) {
    case SheetItem::Kind::saved: return "saved";
    case SheetItem::Kind::confirmed: return "saved after confirmation";
    case SheetItem::Kind::suggestion: return "saved as suggested";
    case SheetItem::Kind::already_saved: return "already saved";
    case SheetItem::Kind::waiting: return "needs confirmation";
    case SheetItem::Kind::refused: return "refused";
    case SheetItem::Kind::duplicate: return "duplicate";
  }
  return "?";
}

int SheetResult::count(SheetItem::Kind k) const {
  return static_cast<int>(std::count_if(items.begin(), items.end(), [&](const SheetItem& i) { return i.kind == k; }));
}

std::string sheet_column(const Trait& trait, int occasion) {
  return trait.occasions > 1 ? trait.code + "_" + std::to_string(occasion) : trait.code;
}

namespace {

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

// What a column of the sheet holds.
struct Column {
  enum class Kind { plot, site, block, row, column, factor, value, note } kind = Kind::value;
  size_t index = 0;      // factor or trait index
  int occasion = 1;
  std::string name;
};

Result<std::vector<Column>> sheet_columns(const StoredTrial& t, const std::vector<DataColumn>& header,
                                          int default_occasion, const std::string& path, int header_line) {
  std::vector<Column> out;
  const std::string where = path + ":" + std::to_string(header_line);
  bool plot = false, any_value = false;
  for (const DataColumn& h : header) {
    Column c;
    c.name = h.name;
    const std::string n = lower(h.name);
    bool known = true;
    if (n == "plot" || n == "label") c.kind = Column::Kind::plot, plot = true;
    else if (n == "site") c.kind = Column::Kind::site;
    else if (n == "block") c.kind = Column::Kind::block;
    else if (n == "field_row" || n == "row") c.kind = Column::Kind::row;
    else if (n == "field_column" || n == "col" || n == "column") c.kind = Column::Kind::column;
    else {
      known = false;
      for (size_t k = 0; k < t.plan.traits.size() && !known; ++k) {
        const Trait& tr = t.plan.traits[k];
        if (h.name == tr.code) {
          // A trial made before codes like "height_2" beside a repeated "height" were refused.
          for (const Trait& other : t.plan.traits)
            for (int occ = 1; other.occasions > 1 && occ <= other.occasions; ++occ)
              if (&other != &tr && h.name == sheet_column(other, occ))
                return make_problem(where + ": field '" + h.name + "' is both the trait " + tr.code + " and occasion " +
                                        std::to_string(occ) + " of " + other.code + "; nothing was saved",
                                    h.name);
          if (default_occasion < 1 || default_occasion > tr.occasions)
            return make_problem(where + ": field '" + h.name + "': " + tr.code + " has " + std::to_string(tr.occasions) +
                                    " occasion(s), not occasion " + std::to_string(default_occasion),
                                h.name);
          c.kind = Column::Kind::value, c.index = k, c.occasion = default_occasion, known = true;
        } else if (tr.occasions > 1) {
          for (int occ = 1; occ <= tr.occasions && !known; ++occ)
            if (h.name == sheet_column(tr, occ)) c.kind = Column::Kind::value, c.index = k, c.occasion = occ, known = true;
        }
      }
      for (size_t k = 0; k < t.plan.factors.size() && !known; ++k)
        if (h.name == t.plan.factors[k].name) c.kind = Column::Kind::factor, c.index = k, known = true;
      if (!known && n == "note") c.kind = Column::Kind::note, known = true;
    }
    if (!known) {
      std::string traits;
      for (const Trait& tr : t.plan.traits) traits += (traits.empty() ? "" : ", ") + tr.code;
      return make_problem(where + ": field '" + h.name +
                              "' is not a column of this trial's sheet (plot, site, block, field_row, field_column, "
                              "the treatment factors, note, or a trait: " + traits + "); nothing was saved",
                          h.name);
    }
    if (c.kind == Column::Kind::value) {
      for (const Column& o : out)
        if (o.kind == Column::Kind::value && o.index == c.index && o.occasion == c.occasion)
          return make_problem(where + ": fields '" + o.name + "' and '" + h.name + "' are the same trait and occasion; nothing was saved", h.name);
      any_value = true;
    }
    out.push_back(c);
  }
  if (!plot) return make_problem(where + ": the header has no 'plot' column; nothing was saved");
  if (!any_value) return make_problem(where + ": the header names no trait of this trial; nothing was saved");
  return out;
}

// Text from the file, shortened for a message.
std::string shorten(const std::string& s) {
  if (s.size() <= 60) return s;
  size_t cut = 57;
  while (cut > 0 && (static_cast<unsigned char>(s[cut]) & 0xC0) == 0x80) --cut;
  return s.substr(0, cut) + "...";
}

// The plan index of a plot cell: a label or a scanned stake code of this trial.
Result<size_t> plot_index(const StoredTrial& t, const std::map<std::string, size_t>& by_label, const std::string& cell) {
  std::string label = trimmed(cell);
  if (label.empty()) return make_problem("the plot is empty");
  if (const auto code = read_stake_code(label)) {
    if (code->trial_uid != t.uid) return make_problem(stake_of_other_trial(*code, t.plan.name));
    label = code->plot_label;
  }
  const auto it = by_label.find(label);
  if (it == by_label.end()) return make_problem("plot '" + shorten(label) + "' is not in the plan of this trial");
  return it->second;
}

// The plan's text for a place or factor column of plot p.
std::string plan_text(const StoredTrial& t, const PlannedPlot& p, const Column& c) {
  switch (c.kind) {
    case Column::Kind::site: return t.plan.sites.empty() ? std::string() : t.plan.sites[static_cast<size_t>(p.site)];
    case Column::Kind::block: return std::to_string(p.block);
    case Column::Kind::row: return std::to_string(p.row);
    case Column::Kind::column: return std::to_string(p.column);
    case Column::Kind::factor: return c.index < p.levels.size() ? t.plan.factors[c.index].levels[p.levels[c.index]] : "";
    default: return "";
  }
}

// "missing: flooded" -> the reason; nullopt when the text is a value.
std::optional<std::string> missing_reason(const std::string& text) {
  const std::string l = lower(text);
  if (l == "missing") return std::string();
  if (l.rfind("missing:", 0) == 0) return trimmed(text.substr(8));
  return std::nullopt;
}

// The identity a written value would have in the log (value_identity), or
// nullopt when it does not parse.
std::optional<std::string> written_identity(const Trait& trait, const std::string& text) {
  LiveObservation row;
  if (const auto reason = missing_reason(text)) {
    row.missing_reason = *reason;
  } else {
    const auto parsed = parse_trait_value(trait, text);
    if (!parsed) return std::nullopt;
    row.value = parsed->text;
    row.number = parsed->number;
  }
  return value_identity(row);
}

bool same_written(const Trait& trait, const std::string& a, const std::string& b) {
  if (a == b) return true;
  const auto x = written_identity(trait, a), y = written_identity(trait, b);
  return x && y && *x == *y;
}

// A note with a line of trace added.
std::string with_trace(const std::string& note, const std::string& trace) {
  return note.empty() ? trace : note + " (" + trace + ")";
}

std::string shown(const LiveObservation& x) {
  return x.value ? *x.value : "missing (" + x.missing_reason.value_or("") + ")";
}

std::string cell_words(const PlannedPlot& p, const Trait& tr, int occasion) {
  return "plot " + p.label + ", " + tr.name + (tr.occasions > 1 ? " (occasion " + std::to_string(occasion) + ")" : "");
}

class SheetEntry {
 public:
  SheetEntry(RecordSession& s, const SheetOptions& o, std::string path) : s_(s), o_(o), path_(std::move(path)) {}

  // Enters one value; appends its item.
  void value(int line, size_t plot, const Column& c, const std::string& text, const std::string& note) {
    const StoredTrial& t = s_.trial();
    const PlannedPlot& p = t.layout.plots[plot];
    const Trait& tr = t.plan.traits[c.index];
    SheetItem item{SheetItem::Kind::refused, line, p.label, c.name, text, {}, {}};
    const std::string where = where_of(line, c.name) + " (" + cell_words(p, tr, c.occasion) + ")";
    auto finish = [&](SheetItem::Kind k, const std::string& message) {
      item.kind = k;
      item.message = where + ": " + message;
      result_.items.push_back(item);
    };
    for (const Status& st : {s_.jump_to(p.label), s_.set_trait(tr.code), s_.set_occasion(c.occasion)})
      if (!st) return finish(SheetItem::Kind::refused, st.problem().message);
    // S4, S5: what the cell holds now (another program may have saved since).
    if (auto fresh = s_.refresh_if_changed(); !fresh) return finish(SheetItem::Kind::refused, fresh.problem().message);
    std::vector<LiveObservation> held;
    for (const LiveObservation& x : s_.live())
      if (x.plot_id == t.plot_ids[plot] && x.trait_id == t.trait_ids[c.index] && x.occasion == c.occasion) held.push_back(x);
    const auto identity = written_identity(tr, text);
    // A value the checks refuse whatever the plot is refused below, never asked about.
    const bool acceptable = identity && (missing_reason(text) || parse_acceptable_value(tr, text));
    if (acceptable && !held.empty() &&
        std::all_of(held.begin(), held.end(), [&](const LiveObservation& x) { return value_identity(x) == *identity; }))
      return finish(SheetItem::Kind::already_saved, "already saved (" + shown(held.front()) + "); nothing saved again");
    bool confirmed_replacement = false;
    std::string held_words;
    if (acceptable && !held.empty()) {
      std::string before;
      bool own = true;
      for (const LiveObservation& x : held) {
        before += (before.empty() ? "" : ", ") + shown(x) + " by " + x.observer;
        own = own && x.key.device_id == t.device_id;
      }
      const std::string question = "the cell already holds " + before + "; the sheet says " + text +
                                   (own ? " (saving replaces it)" : " (saving adds it beside the other device's value: a conflict to settle)");
      const SheetAnswer a = answer({line, p.label, c.name, text, question, {}, true});
      if (a != SheetAnswer::save_as_written) return finish(SheetItem::Kind::waiting, question + "; not saved");
      confirmed_replacement = true;
      held_words = before;
    }
    if (note_line_ != line) {
      note_line_ = line;
      pending_note_ = note;
    }
    s_.set_pending_note(confirmed_replacement
                            ? with_trace(pending_note_, "sheet line " + std::to_string(line) + " replaced " + held_words)
                            : pending_note_);
    if (const auto reason = missing_reason(text)) {
      if (reason->empty()) return finish(SheetItem::Kind::refused, "write the reason after 'missing:' (e.g. missing: flooded); not saved");
      if (auto st = s_.record_missing(*reason, ""); !st) return finish(SheetItem::Kind::refused, "not saved: " + st.problem().message);
      note_taken_ = note_taken_ || !pending_note_.empty();
      pending_note_.clear();
      return finish(confirmed_replacement ? SheetItem::Kind::confirmed : SheetItem::Kind::saved, "saved as missing (" + *reason + ")");
    }
    EntryOutcome out = s_.enter(text);
    SheetItem::Kind saved_as = confirmed_replacement ? SheetItem::Kind::confirmed : SheetItem::Kind::saved;
    // At most a few rounds: a suggestion is checked again and may ask again.
    for (int round = 0; round < 3 && out.kind != EntryOutcome::Kind::saved; ++round) {
      const RecordView v = s_.view();
      const bool can_confirm = out.kind == EntryOutcome::Kind::needs_confirmation;
      if (!can_confirm && v.suggestion.empty()) break;
      item.suggestion = v.suggestion;
      const SheetAnswer a = answer({line, p.label, c.name, v.typed, out.message, v.suggestion, can_confirm});
      if (a == SheetAnswer::save_as_written && can_confirm) {
        out = s_.confirm();
        saved_as = SheetItem::Kind::confirmed;
      } else if (a == SheetAnswer::save_suggestion && !v.suggestion.empty()) {
        // The paper's figure stays on record beside the value saved.
        s_.set_pending_note(with_trace(pending_note_, "sheet line " + std::to_string(line) + " reads " + v.typed +
                                                          "; saved " + v.suggestion + " as suggested"));
        out = s_.save_suggestion();
        saved_as = SheetItem::Kind::suggestion;
      } else {
        break;
      }
    }
    if (out.kind == EntryOutcome::Kind::saved) {
      note_taken_ = note_taken_ || !pending_note_.empty();
      pending_note_.clear();   // the line's note went with this value
      return finish(saved_as, out.message);
    }
    s_.drop_entry();
    if (out.kind == EntryOutcome::Kind::needs_confirmation) return finish(SheetItem::Kind::waiting, out.message);
    return finish(SheetItem::Kind::refused, out.message);
  }

  void line_item(SheetItem::Kind k, int line, const std::string& plot, const std::string& column, const std::string& text,
                 const std::string& message) {
    result_.items.push_back({k, line, plot, column, text, where_of(line, column) + ": " + message, {}});
  }

  // A line's note travels with its first saved value. One that found none
  // goes on the line's first value already held (as the Record screen's
  // note does); with no value at all on the line it is refused.
  void end_line(int line, size_t plot, const std::string& note, const std::vector<const Column*>& value_columns) {
    s_.set_pending_note("");
    const bool taken = note_taken_;
    note_taken_ = false;
    pending_note_.clear();
    note_line_ = -1;
    if (note.empty() || taken) return;
    const StoredTrial& t = s_.trial();
    for (const LiveObservation& x : s_.live())
      if (x.plot_id == t.plot_ids[plot] && x.note == note) return;   // entered before
    for (const Column* c : value_columns) {
      if (!s_.jump_to(t.layout.plots[plot].label) || !s_.set_trait(t.plan.traits[c->index].code) ||
          !s_.set_occasion(c->occasion))
        continue;
      if (!s_.view().current) continue;
      if (auto st = s_.add_note(note); st) {
        line_item(SheetItem::Kind::saved, line, t.layout.plots[plot].label, "note", note,
                  "note saved with the " + c->name + " value already held");
        return;
      }
    }
    line_item(SheetItem::Kind::refused, line, t.layout.plots[plot].label, "note", note,
              "a note needs a value on its line (or 'missing: reason'); not saved");
  }

  std::string where_of(int line, const std::string& column) const {
    return path_ + ":" + std::to_string(line) + (column.empty() ? "" : ": field '" + column + "'");
  }

  SheetResult take() { return std::move(result_); }
  bool was_asked(int line, const std::string& column) const { return asked_.count({line, column}) > 0; }

 private:
  SheetAnswer answer(const SheetQuestion& q) {
    asked_.insert({q.line, q.column});
    asked_.insert({q.line, "*"});
    if (o_.confirm.count({q.line, q.column}) || o_.confirm.count({q.line, "*"}))
      return q.can_confirm ? SheetAnswer::save_as_written : SheetAnswer::leave;
    if (o_.ask) return o_.ask(q);
    return SheetAnswer::leave;
  }

  RecordSession& s_;
  const SheetOptions& o_;
  std::string path_;
  SheetResult result_;
  int note_line_ = -1;
  std::string pending_note_;   // the line's note, until a value takes it
  bool note_taken_ = false;    // a value of this line was saved with its note
  std::set<std::pair<int, std::string>> asked_;   // (line, column) of every question
};

}  // namespace

namespace {

}  // namespace

Result<SheetResult> enter_sheet(RecordSession& session, const std::string& path, const SheetOptions& options) {
  const CsvRead read = read_csv_file(path);
  if (!read.ok)
    return make_problem(path + (read.problem.line > 0 ? ":" + std::to_string(read.problem.line) : "") +
                            (read.problem.column.empty() ? "" : ": field '" + read.problem.column + "'") + ": " +
                            read.problem.message + "; nothing was saved",
                        read.problem.column);
  const StoredTrial& t = session.trial();
  const PlotTable& table = read.csv.table;
  auto columns = sheet_columns(t, table.columns, options.occasion, path, read.csv.header_line);
  if (!columns) return columns.problem();
  std::map<std::string, size_t> by_label;
  for (size_t i = 0; i < t.layout.plots.size(); ++i) by_label[t.layout.plots[i].label] = i;

  SheetEntry entry(session, options, path);
  const int records = table.records();
  auto cell = [&](int r, size_t c) { return trimmed(table.columns[c].cells[static_cast<size_t>(r)]); };
  size_t plot_column = 0, note_column = columns->size();
  for (size_t c = 0; c < columns->size(); ++c) {
    if ((*columns)[c].kind == Column::Kind::plot) plot_column = c;
    if ((*columns)[c].kind == Column::Kind::note) note_column = c;
  }

  // S2: each line's plot, and its place and entry against the plan.
  std::vector<std::optional<size_t>> plot_of(static_cast<size_t>(records));
  for (int r = 0; r < records; ++r) {
    const int line = read.csv.line_of_record[static_cast<size_t>(r)];
    auto idx = plot_index(t, by_label, cell(r, plot_column));
    if (!idx) {
      entry.line_item(SheetItem::Kind::refused, line, shorten(cell(r, plot_column)), (*columns)[plot_column].name,
                      shorten(cell(r, plot_column)), idx.problem().message + "; nothing saved from this line");
      continue;
    }
    const PlannedPlot& p = t.layout.plots[*idx];
    bool matches = true;
    for (size_t c = 0; c < columns->size() && matches; ++c) {
      const Column& col = (*columns)[c];
      if (col.kind == Column::Kind::plot || col.kind == Column::Kind::value || col.kind == Column::Kind::note) continue;
      const std::string written = cell(r, c);
      if (written.empty()) continue;
      const std::string planned = plan_text(t, p, col);
      if (written != planned) {
        entry.line_item(SheetItem::Kind::refused, line, p.label, col.name, shorten(written),
                        "the sheet says " + col.name + " " + shorten(written) + ", but plot " + p.label + " has " + col.name +
                            " " + planned + " in the plan; nothing saved from this line (check which plot was measured)");
        matches = false;
      }
    }
    if (matches) plot_of[static_cast<size_t>(r)] = *idx;
  }

  // S3: for each plot and value column, the lines with a value there, the
  // first of them, and whether they all read alike (one pass, then O(1) a line).
  struct Group {
    std::vector<int> with_value;
    bool differ = false;
  };
  std::vector<const Column*> value_columns;
  for (const Column& col : *columns)
    if (col.kind == Column::Kind::value) value_columns.push_back(&col);
  std::map<std::pair<size_t, size_t>, Group> groups;   // (plot, column) -> its lines
  for (int r = 0; r < records; ++r) {
    if (!plot_of[static_cast<size_t>(r)]) continue;
    for (size_t c = 0; c < columns->size(); ++c) {
      if ((*columns)[c].kind != Column::Kind::value || cell(r, c).empty()) continue;
      Group& g = groups[{*plot_of[static_cast<size_t>(r)], c}];
      if (!g.with_value.empty() && !g.differ)
        g.differ = !same_written(t.plan.traits[(*columns)[c].index], cell(g.with_value.front(), c), cell(r, c));
      if (g.with_value.size() < 50) g.with_value.push_back(r);   // enough to name in a message
      else if (g.with_value.back() != -1) g.with_value.push_back(-1);   // "and more"
    }
  }

  for (int r = 0; r < records; ++r) {
    if (!plot_of[static_cast<size_t>(r)]) continue;
    const size_t plot = *plot_of[static_cast<size_t>(r)];
    const PlannedPlot& p = t.layout.plots[plot];
    const int line = read.csv.line_of_record[static_cast<size_t>(r)];
    const std::string note = note_column < columns->size() ? cell(r, note_column) : std::string();
    if (note.size() > kMaxNoteBytes) {
      entry.line_item(SheetItem::Kind::refused, line, p.label, "note", shorten(note),
                      "the note is longer than " + std::to_string(kMaxNoteBytes) +
                          " bytes; nothing saved from this line (shorten the note)");
      continue;
    }
    std::vector<std::string> repeated;   // columns this later line repeats (S3)
    int repeated_first = read.csv.line_of_record.back() + 1;
    for (size_t c = 0; c < columns->size(); ++c) {
      const Column& col = (*columns)[c];
      if (col.kind != Column::Kind::value) continue;
      const std::string text = cell(r, c);
      if (text.empty()) continue;
      const Group& g = groups[{plot, c}];
      if (g.differ) {
        std::string lines, values;
        for (int o : g.with_value) {
          if (o < 0) {
            lines += ", ...";
            break;
          }
          lines += (lines.empty() ? "" : ", ") + std::to_string(read.csv.line_of_record[static_cast<size_t>(o)]);
          if (values.size() < 200) values += (values.empty() ? "" : ", ") + shorten(cell(o, c));
        }
        entry.line_item(SheetItem::Kind::refused, line, p.label, col.name, shorten(text),
                        "plot " + p.label + " is on lines " + lines + " with different " + col.name + " (" + values +
                            "): saved from none of them; look at the paper sheet and enter the right one");
        continue;
      }
      if (g.with_value.front() != r) {
        repeated.push_back(col.name);
        repeated_first = std::min(repeated_first, read.csv.line_of_record[static_cast<size_t>(g.with_value.front())]);
        continue;
      }
      entry.value(line, plot, col, text, note);
    }
    if (!repeated.empty()) {
      std::string names;
      for (const std::string& n : repeated) names += (names.empty() ? "" : ", ") + n;
      entry.line_item(SheetItem::Kind::duplicate, line, p.label, "", names,
                      "plot " + p.label + " is also on line " + std::to_string(repeated_first) + " with the same " +
                          names + ": nothing saved from this line");
    }
    entry.end_line(line, plot, repeated.empty() ? note : std::string(), value_columns);
  }
  // --confirm-line entries that matched no question are said (a typo must not look done).
  SheetResult out = entry.take();
  for (const auto& [line, column] : options.confirm)
    if (!entry.was_asked(line, column))
      out.items.push_back({SheetItem::Kind::refused, line, "", column == "*" ? "" : column, "",
                           path + ":" + std::to_string(line) + (column == "*" ? "" : ": field '" + column + "'") +
                               ": --confirm-line names no value that asked for confirmation there",
                           {}});
  return out;
}

std::string blank_sheet_csv(const StoredTrial& t, const std::vector<std::string>& trait_columns, bool blind) {
  std::ostringstream o;
  const bool sites = !t.plan.sites.empty();
  o << "plot" << (sites ? ",site" : "") << ",block,field_row,field_column";
  if (!blind)
    for (const TreatmentFactor& f : t.plan.factors) o << "," << csv_field(f.name);
  for (const std::string& c : trait_columns) o << "," << csv_field(c);
  o << ",note\n";
  for (const PlannedPlot& plot : t.layout.plots) {   // in walk order
    const PlannedPlot* p = &plot;
    o << csv_field(p->label);
    if (sites) o << "," << csv_field(t.plan.sites[static_cast<size_t>(p->site)]);
    o << "," << p->block << "," << p->row << "," << p->column;
    if (!blind)
      for (size_t k = 0; k < p->levels.size() && k < t.plan.factors.size(); ++k)
        o << "," << csv_field(t.plan.factors[k].levels[p->levels[k]]);
    for (size_t k = 0; k < trait_columns.size(); ++k) o << ",";
    o << ",\n";
  }
  return o.str();
}

}  // namespace furrow
