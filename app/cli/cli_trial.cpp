#include "app/cli/cli_trial.h"
#include "app/cli/output_safety.h"
#include "storage/text_file.h"

#include <algorithm>
#include <fstream>
#include <iostream>
#include <map>
#include <set>

#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include "app/cli/analysis_output.h"
#include "app/print/field_sheet.h"
#include "app/print/stake_labels.h"
#include "app/work/sheet_entry.h"
#include "core/stake_code.h"
#include "app/work/record_session.h"
#include "app/work/trial_analysis.h"
#include "app/work/trial_summary.h"
#include "core/analysis.h"
#include "core/entry_checks.h"
#include "storage/enrolment.h"
#include "storage/plan_file.h"
#include "storage/trial_store.h"

namespace furrow {
namespace {

constexpr int kExitBadInput = 2;

int fail(const std::string& where, const std::string& message) {
  // The file named once: messages from storage often start with it already.
  if (message.rfind(where + ":", 0) == 0 || message.rfind(where + " ", 0) == 0) std::cerr << terminal_safe(message) << "\n";
  else std::cerr << terminal_safe(where + ": " + message) << "\n";
  return kExitBadInput;
}

const Trait* find_trait(const StoredTrial& t, const std::string& code, size_t* index) {
  for (size_t i = 0; i < t.plan.traits.size(); ++i)
    if (t.plan.traits[i].code == code) { *index = i; return &t.plan.traits[i]; }
  return nullptr;
}

}  // namespace

int run_trial_new(const std::string& plan_path, const std::string& db_path) {
  auto made = create_trial_from_plan(plan_path, db_path);
  if (!made) {
    std::cerr << made.problem().message << "\n";
    return kExitBadInput;
  }
  std::cout << "created " << db_path << ": " << *made << "\n";
  return 0;
}

int run_trial_show(const std::string& db_path) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path, open.problem().message);
  const StoredTrial& t = open->trial;
  auto live = live_observations(open->db, 0);
  if (!live) return fail(db_path, live.problem().message);
  std::map<std::int64_t, size_t> trait_of;
  for (size_t i = 0; i < t.trait_ids.size(); ++i) trait_of[t.trait_ids[i]] = i;
  std::map<size_t, std::set<std::pair<std::int64_t, int>>> filled;
  for (const auto& o : *live)
    if (o.value) filled[trait_of[o.trait_id]].insert({o.plot_id, o.occasion});
  std::cout << t.plan.name << "\n  site " << t.plan.site << ", season " << t.plan.season << "\n  "
            << design_kind_title(t.plan.design) << ", " << t.plan.replicates << " replicates, grid " << t.plan.rows
            << " x " << t.plan.columns << ", " << t.layout.plots.size() << " plots, status " << t.status << "\n";
  for (const auto& f : t.plan.factors) std::cout << "  factor " << f.name << ": " << f.levels.size() << " levels\n";
  std::cout << "  traits (collected / plots x occasions):\n";
  for (size_t i = 0; i < t.plan.traits.size(); ++i) {
    const Trait& tr = t.plan.traits[i];
    const size_t need = t.layout.plots.size() * static_cast<size_t>(tr.occasions);
    std::cout << "    " << tr.code << "  " << tr.name << " (" << (tr.unit.empty() ? "-" : tr.unit) << ", "
              << trait_kind_key(tr.kind) << (tr.required ? ", required" : "") << "): " << filled[i].size() << " / "
              << need << "\n";
  }
  std::cout << "  device " << t.device_id << ", created " << t.created_at << "\n";
  return 0;
}

namespace {

// A message of several lines (one per finding) on standard error, the later
// lines indented.
void print_lines(const std::string& message) {
  for (size_t at = 0, k = 0; at < message.size(); ++k) {
    const size_t end = std::min(message.find('\n', at), message.size());
    std::cerr << (k ? "    " : "") << terminal_safe(message.substr(at, end - at)) << "\n";
    at = end + 1;
  }
}

// One question about a sheet's value, on the terminal.
SheetAnswer ask_on_terminal(const SheetQuestion& q) {
  print_lines(q.message);
  std::string choices;
  if (q.can_confirm) choices += "[c] save " + q.text + " as written   ";
  if (!q.suggestion.empty()) choices += "[s] save " + q.suggestion + " instead   ";
  choices += "[Enter] leave it unsaved: ";
  std::cerr << terminal_safe("line " + std::to_string(q.line) + ", plot " + q.plot + ", " + q.column + " = " + q.text +
                             ": " + choices)
            << std::flush;
  // An answer not understood is asked again (three times, then left unsaved).
  for (int tries = 0; tries < 3; ++tries) {
    std::string answer;
    const bool got = static_cast<bool>(std::getline(std::cin, answer));
    if (!::isatty(STDIN_FILENO)) std::cerr << "\n";   // the answer was not echoed
    if (!got) return SheetAnswer::leave;
    while (!answer.empty() && std::isspace(static_cast<unsigned char>(answer.back()))) answer.pop_back();
    while (!answer.empty() && std::isspace(static_cast<unsigned char>(answer.front()))) answer.erase(0, 1);
    if (answer.empty()) return SheetAnswer::leave;
    if (q.can_confirm && (answer == "c" || answer == "C")) return SheetAnswer::save_as_written;
    if (!q.suggestion.empty() && (answer == "s" || answer == "S")) return SheetAnswer::save_suggestion;
    std::cerr << "answer " << (q.can_confirm ? "c, " : "") << (q.suggestion.empty() ? "" : "s, ")
              << "or Enter to leave it unsaved: " << std::flush;
  }
  return SheetAnswer::leave;
}

int run_record_sheet(const RecordRequest& r) {
  SheetOptions options;
  options.occasion = r.occasion;
  for (const std::string& c : r.confirm_cells) {
    const size_t colon = c.find(':');
    const std::string line = c.substr(0, colon);
    if (line.empty() || line.find_first_not_of("0123456789") != std::string::npos || line.size() > 9)
      return fail(r.from_sheet, "--confirm-line takes LINE or LINE:COLUMN (e.g. 21:height_cm), not '" + c + "'");
    options.confirm.insert({std::stoi(line), colon == std::string::npos ? std::string("*") : c.substr(colon + 1)});
  }
  if (r.ask || ::isatty(STDIN_FILENO)) options.ask = ask_on_terminal;
  // One sheet at a time into a trial file: two entries at once would each
  // find the other's values missing (an advisory lock beside SQLite's own).
  // The descriptor is closed only after the session's connection (declared
  // below, so destroyed first): closing another handle on the file while
  // SQLite has it open would drop SQLite's own locks in this process.
  const int lock_fd = ::open(r.db.c_str(), O_RDONLY | O_CLOEXEC);
  if (lock_fd >= 0 && ::flock(lock_fd, LOCK_EX | LOCK_NB) != 0) {
    ::close(lock_fd);
    return fail(r.db, "another sheet is being entered into this trial file now; enter this one when it is done");
  }
  struct Unlock {
    int fd;
    ~Unlock() {
      if (fd >= 0) ::close(fd);
    }
  } unlock{lock_fd};
  auto session = RecordSession::open(r.db, r.observer);
  if (!session) return fail(r.db, session.problem().message);
  auto result = enter_sheet(*session, r.from_sheet, options);
  if (!result) return fail(r.from_sheet, result.problem().message);
  using K = SheetItem::Kind;
  for (const SheetItem& i : result->items)
    if (i.kind == K::refused || i.kind == K::waiting || i.kind == K::duplicate) print_lines(std::string(sheet_item_key(i.kind)) + ": " + i.message);
  const int saved = result->count(K::saved) + result->count(K::confirmed) + result->count(K::suggestion);
  std::cout << terminal_safe(r.from_sheet) << ": saved " << saved << " value(s)";
  if (result->count(K::confirmed)) std::cout << " (" << result->count(K::confirmed) << " after confirmation)";
  if (result->count(K::suggestion)) std::cout << " (" << result->count(K::suggestion) << " as suggested)";
  std::cout << "; " << result->count(K::already_saved) << " already saved; " << result->count(K::waiting)
            << " need confirmation; " << result->count(K::refused) << " refused; " << result->count(K::duplicate)
            << " duplicate(s) saved nothing\n";
  if (result->count(K::waiting))
    std::cout << "values that need confirmation are not saved: correct them in the file, or save them as written with "
                 "--confirm-line LINE:COLUMN (or answer at a terminal); entering the file again saves nothing twice\n";
  if (result->count(K::refused)) return kExitBadInput;
  if (result->count(K::waiting)) return kExitNeedsConfirmation;
  return 0;
}

}  // namespace

int run_record(const RecordRequest& r) {
  if (r.observer.empty()) return fail(r.db, "say who measured: --observer NAME");
  if (!r.from_sheet.empty()) {
    if (!r.plot.empty() || !r.trait.empty() || !r.value.empty() || !r.missing.empty() || r.confirm)
      return fail(r.db, "--from-sheet takes its plots, traits and values from the file: leave out --plot, --trait, "
                        "--value, --missing and --confirm");
    return run_record_sheet(r);
  }
  if (!r.confirm_cells.empty()) return fail(r.db, "--confirm-line goes with --from-sheet (one value: --confirm)");
  if (r.plot.empty() || r.trait.empty()) return fail(r.db, "say which plot and trait: --plot LABEL --trait CODE");
  if (r.value.empty() == r.missing.empty()) return fail(r.db, "give either --value or --missing REASON");
  auto session = RecordSession::open(r.db, r.observer);
  if (!session) return fail(r.db, session.problem().message);
  for (const Status& s : {session->jump_to(r.plot), session->set_trait(r.trait), session->set_occasion(r.occasion)})
    if (!s) return fail(r.db, s.problem().message);
  const RecordView where = session->view();
  session->set_pending_note(r.note);
  if (!r.missing.empty()) {
    if (auto s = session->record_missing(r.missing, r.note); !s) return fail(r.db, "not saved: " + s.problem().message);
    std::cout << "saved plot " << where.plot_label << ", " << where.trait_name
              << (where.occasions > 1 ? " (occasion " + std::to_string(where.occasion) + ")" : "") << " = missing ("
              << r.missing << ")\n";
    return 0;
  }
  EntryOutcome out = session->enter(r.value);
  for (const Finding& f : out.findings) std::cerr << severity_key(f.severity) << ": " << f.message << "\n";
  if (out.kind == EntryOutcome::Kind::refused) {
    // A refused value has its findings; a save that failed says why.
    if (worst(out.findings) != Severity::refuse) return fail(r.db, out.message);
    return kExitBadInput;
  }
  if (out.kind == EntryOutcome::Kind::needs_confirmation) {
    if (!r.confirm) {
      std::cerr << "not saved: confirm with --confirm if the value is right\n";
      return kExitNeedsConfirmation;
    }
    out = session->confirm();
  }
  if (out.kind != EntryOutcome::Kind::saved) return fail(r.db, out.message);
  std::cout << out.message << "\n";
  return 0;
}

int run_walk(const WalkRequest& r) {
  auto session = RecordSession::open(r.db, "command line");
  if (!session) return fail(r.db, session.problem().message);
  const bool changes = !r.traits.empty() || !r.blocks.empty() || r.occasion != 1 || r.every_trait_per_plot;
  if (changes) {
    std::vector<std::string> traits = r.traits;
    if (traits.empty()) traits = session->walk().choice(session->trial()).trait_codes;   // keep today's traits
    for (const std::string& code : traits)
      if (auto s = session->set_trait(code); !s) return fail(r.db, s.problem().message);
    for (int b : r.blocks) {
      const auto& plots = session->trial().layout.plots;
      if (std::none_of(plots.begin(), plots.end(), [&](const PlannedPlot& p) { return p.block == b; }))
        return fail(r.db, "block " + std::to_string(b) + " is not in this trial");
    }
    if (auto s = session->set_walk(WalkChoice{traits, r.occasion, r.blocks, r.every_trait_per_plot}); !s)
      return fail(r.db, s.problem().message);
  }
  const RecordView v = session->view();
  std::cout << "today's walk: " << v.walk_summary << "\n";
  std::cout << "done " << v.walk_done << " of " << v.walk_total << " values"
            << (v.walk_complete ? "" : "; next: plot " + v.plot_label + ", " + v.trait_name) << "\n";
  return 0;
}

int run_labels(const std::string& db_path, const std::string& out, const std::string& sheet_key, bool blind) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path, open.problem().message);
  auto sheet = label_sheet(sheet_key);
  if (!sheet) return fail(db_path, sheet.problem().message);
  if (auto w = write_stake_labels(open->trial, *sheet, blind, out); !w) return fail(out, w.problem().message);
  const size_t n = open->trial.layout.plots.size();
  const size_t per_page = static_cast<size_t>(sheet->columns * sheet->rows);
  char module[32];
  std::snprintf(module, sizeof module, "%.2f", qr_module_mm(*sheet, open->trial));
  std::cout << "labels " << out << ": " << n << " plots in walk order on " << (n + per_page - 1) / per_page
            << " page(s), " << sheet->title << "; QR modules " << module
            << " mm (error correction M); print at 100 % (no fit to page)\n";
  return 0;
}

int run_sheets(const SheetsRequest& r) {
  auto open = open_trial_database(r.db, Access::read_only);
  if (!open) return fail(r.db, open.problem().message);
  const StoredTrial& t = open->trial;
  auto paper = sheet_paper(r.paper);
  if (!paper) return fail(r.db, paper.problem().message);
  FieldSheetRequest request;
  request.occasion = r.occasion;
  request.blind = r.blind;
  request.printed_on = local_date_today();
  if (r.traits.empty()) {
    for (size_t k = 0; k < t.plan.traits.size(); ++k) request.traits.push_back(k);
  } else {
    for (std::string code : r.traits) {
      while (!code.empty() && std::isspace(static_cast<unsigned char>(code.back()))) code.pop_back();
      while (!code.empty() && std::isspace(static_cast<unsigned char>(code.front()))) code.erase(0, 1);
      size_t k = 0;
      if (!find_trait(t, code, &k)) return fail(r.db, "trait '" + code + "' is not measured in this trial");
      if (std::find(request.traits.begin(), request.traits.end(), k) != request.traits.end())
        return fail(r.db, "trait '" + code + "' is named twice in --traits");
      request.traits.push_back(k);
    }
  }
  for (const std::string& out : {r.out, r.csv_out})   // both checked before either is written
    if (!out.empty())
      if (auto ok = check_output_file(out); !ok) return fail(out, ok.problem().message);
  auto layout = write_field_sheet(t, *paper, request, r.out);
  if (!layout) return fail(r.out, layout.problem().message);
  std::vector<std::string> columns;
  for (const auto& c : layout->columns)
    if (c.holds == FieldSheetLayout::Column::Holds::value) columns.push_back(c.title);
  if (!r.csv_out.empty())
    if (auto w = write_text_file(r.csv_out, blank_sheet_csv(t, columns, r.blind)); !w)
      return fail(r.csv_out, w.problem().message);
  std::cout << "sheet " << terminal_safe(r.out) << ": " << t.layout.plots.size() << " plots in walk order on "
            << layout->pages << " page(s), " << (r.paper == "a4" ? "A4" : "US Letter")
            << (layout->landscape ? " landscape" : " portrait") << "; print at 100 %\n";
  if (!r.csv_out.empty())
    std::cout << "blank CSV " << terminal_safe(r.csv_out) << ": type the values in, then furrow record --from-sheet\n";
  return 0;
}

int run_export(const std::string& db_path, const std::string& kind, const std::string& out) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path, open.problem().message);
  std::string text;
  if (kind == "layout") {
    text = layout_csv(open->trial);
  } else {
    auto live = live_observations(open->db, 0);
    if (!live) return fail(db_path, live.problem().message);
    std::set<std::string> revoked;
    auto devices = list_enrolments(open->db);
    if (!devices) return fail(db_path, devices.problem().message);
    for (const Enrolment& e : *devices)
      if (e.revoked()) revoked.insert(e.device_id);
    text = kind == "long" ? long_data_csv(open->trial, *live, revoked) : wide_data_csv(open->trial, *live);
  }
  if (out.empty()) {
    if (!::isatty(STDOUT_FILENO)) {
      std::cout << text;
      return 0;
    }
    // On a terminal, no control character from a note or a name reaches it.
    for (size_t at = 0; at < text.size();) {
      const size_t end = std::min(text.find('\n', at), text.size());
      std::cout << terminal_safe(text.substr(at, end - at)) << "\n";
      at = end + 1;
    }
    return 0;
  }
  // Written beside it and renamed: a full disk never leaves half a file in
  // place of the earlier good one.
  if (auto w = write_text_file(out, text); !w) return fail(out, w.problem().message);
  return 0;
}

int run_analyze_db(const std::string& db_path, const std::string& trait_code, int occasion, bool json, double alpha,
                   const std::string& sums, bool without_interaction, const std::string& method,
                   const std::string& field_trend) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path, open.problem().message);
  const StoredTrial& t = open->trial;
  size_t trait_index = 0;
  const Trait* trait = find_trait(t, trait_code, &trait_index);
  if (!trait) return fail(db_path, "trait '" + trait_code + "' is not measured in this trial");
  auto live = live_observations(open->db, t.trait_ids[trait_index]);
  if (!live) return fail(db_path, live.problem().message);
  AnalysisOptions options;
  options.alpha = alpha;
  options.sums = sums == "sequential" ? SumsKind::sequential : SumsKind::partial;
  options.without_interaction = without_interaction;
  if (method == "reml") {
    const FieldTrendChoice trend = field_trend == "test"     ? FieldTrendChoice::test
                                   : field_trend == "always" ? FieldTrendChoice::always
                                                             : FieldTrendChoice::off;
    if (trend != FieldTrendChoice::off && t.plan.sites.size() > 1)
      return fail(db_path, "field trend is fitted one site at a time; this trial has several sites");
    auto r = reml_trial_trait(t, *live, trait_index, occasion, options, trend);
    if (!r) {
      std::string where = db_path;
      if (r.problem().record >= 0) where += ": plot " + t.layout.plots[r.problem().record].label;
      return fail(where, r.problem().message);
    }
    std::cout << (json ? reml_json({*r}) : reml_text(*r));
    return 0;
  }
  if (field_trend != "off") return fail(db_path, "--field-trend needs --method reml");
  auto a = analyse_trial_trait(t, *live, trait_index, occasion, options);
  if (!a) {
    std::string where = db_path;
    if (a.problem().record >= 0) where += ": plot " + t.layout.plots[a.problem().record].label;
    return fail(where, a.problem().message);
  }
  // Records are plots in walking order: name them by label in the output.
  RecordNames names;
  names.word = "plot";
  for (const PlannedPlot& p : t.layout.plots) names.names.push_back(p.label);
  if (json) std::cout << analysis_json({*a}, names);
  else std::cout << analysis_text(*a, names);
  return 0;
}

}  // namespace furrow
