// A typed-back field sheet through the Record checks (app/work/sheet_entry.h,
// rules S1-S6), on the demo plan with the demo day's values as the crew wrote
// them on paper. The checks' outcomes are those of the Record screen; the
// rules about duplicates and entering a sheet again are ours.

#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <map>
#include <random>
#include <set>
#include <sstream>

#include "app/work/sheet_entry.h"
#include "core/stake_code.h"
#include "storage/csv_table.h"
#include "tests/test_support.h"

using namespace furrow;

namespace {

struct DemoLine {
  std::string plot, block, row, column, entry, stand, height, note;
};

// The demo day as written on the paper sheet (demo_data/harrow_ridge_oats_2026.csv):
// plot 307's height is the decimal slip 8.3 for 83; plot 214 was flooded.
std::vector<DemoLine> demo_lines() {
  const CsvRead r = read_csv_file(std::string(FURROW_SOURCE_DIR) + "/demo_data/harrow_ridge_oats_2026.csv");
  REQUIRE(r.ok);
  const PlotTable& t = r.csv.table;
  auto col = [&](const char* name) { return t.find(name)->cells; };
  std::vector<DemoLine> out;
  const auto plot = col("plot"), block = col("block"), row = col("field_row"), column = col("field_column"),
             entry = col("entry"), stand = col("stand_count"), height = col("height_cm"), note = col("note");
  for (size_t i = 0; i < plot.size(); ++i)
    out.push_back({plot[i], block[i], row[i], column[i], entry[i], stand[i], height[i], note[i]});
  return out;
}

std::string quoted(const std::string& s) {
  return s.find_first_of(",\"\n") == std::string::npos ? s : "\"" + s + "\"";
}

std::string sheet_text(const std::vector<DemoLine>& lines) {
  std::string s = "plot,block,field_row,field_column,entry,stand_count,height_cm,note\n";
  for (const DemoLine& l : lines) {
    const std::string height = l.plot == "214" ? "missing: flooded" : l.height;
    s += quoted(l.plot) + "," + l.block + "," + l.row + "," + l.column + "," + quoted(l.entry) + "," + l.stand + "," +
         height + "," + quoted(l.note) + "\n";
  }
  return s;
}

std::string write_sheet(const std::string& name, const std::string& text) {
  const auto dir = test::scratch_dir("sheets");
  std::filesystem::create_directories(dir);
  const std::string path = (dir / name).string();
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

int log_rows(const std::string& db) {
  auto open = open_trial_database(db, Access::read_only);
  REQUIRE(open.ok());
  auto all = all_observations(open->db);
  REQUIRE(all.ok());
  return static_cast<int>(all->size());
}

// The live values of a trait by plot label ("missing: reason" for no value).
std::map<std::string, std::vector<std::string>> live_by_plot(const RecordSession& s, const std::string& code) {
  const StoredTrial& t = s.trial();
  std::map<std::int64_t, std::string> label;
  for (size_t i = 0; i < t.plot_ids.size(); ++i) label[t.plot_ids[i]] = t.layout.plots[i].label;
  std::int64_t trait = 0;
  for (size_t k = 0; k < t.plan.traits.size(); ++k)
    if (t.plan.traits[k].code == code) trait = t.trait_ids[k];
  std::map<std::string, std::vector<std::string>> out;
  for (const LiveObservation& x : s.live())
    if (x.trait_id == trait) out[label[x.plot_id]].push_back(x.value ? *x.value : "missing: " + x.missing_reason.value_or(""));
  return out;
}

const SheetItem* item_at(const SheetResult& r, int line, const std::string& column) {
  for (const SheetItem& i : r.items)
    if (i.line == line && i.column == column) return &i;
  return nullptr;
}

}  // namespace

TEST_CASE("the demo sheet typed back: the slip asks, an unknown plot is refused, a duplicate saves nothing, the rest once") {
  const std::string db = test::fresh_demo_trial("sheet_back.furrow");
  std::vector<DemoLine> lines = demo_lines();
  REQUIRE(lines.size() == 80);
  // Lines 2-81 are the 80 plots; 82 an unknown plot; 83 plot 105 again, written the same.
  lines.push_back({"999", "", "", "", "", "230", "95", ""});
  lines.push_back(lines[4]);
  REQUIRE(lines[4].plot == "105");
  const std::string path = write_sheet("demo_back.csv", sheet_text(lines));

  auto s = RecordSession::open(db, "Ana Pell");
  REQUIRE(s.ok());
  auto r = enter_sheet(*s, path, SheetOptions{});
  REQUIRE(r.ok());
  // The slip: plot 307 on line 48 (the 47th plot), height 8.3: asks, with 83 offered.
  REQUIRE(lines[46].plot == "307");
  const SheetItem* slip = item_at(*r, 48, "height_cm");
  REQUIRE(slip);
  CHECK(slip->kind == SheetItem::Kind::waiting);
  CHECK(slip->suggestion == "83");
  CHECK(slip->message.find("decimal slip") != std::string::npos);
  CHECK(slip->message.rfind(path + ":48: field 'height_cm'", 0) == 0);
  // The unknown plot: refused, named by file, line and field.
  const SheetItem* unknown = item_at(*r, 82, "plot");
  REQUIRE(unknown);
  CHECK(unknown->kind == SheetItem::Kind::refused);
  CHECK(unknown->message == path + ":82: field 'plot': plot '999' is not in the plan of this trial; nothing saved from this line");
  // The duplicate line: nothing of its own.
  CHECK(r->count(SheetItem::Kind::duplicate) == 1);
  CHECK(item_at(*r, 83, "")->kind == SheetItem::Kind::duplicate);
  // The rest saved once: 80 stand counts less the flooded plot's empty one,
  // 80 heights less the slip (214's as missing).
  CHECK(r->count(SheetItem::Kind::saved) == 79 + 79);
  CHECK(r->count(SheetItem::Kind::refused) == 1);
  CHECK(r->count(SheetItem::Kind::waiting) == 1);
  CHECK(log_rows(db) == 158);
  const auto heights = live_by_plot(*s, "height_cm");
  CHECK(heights.size() == 79);
  CHECK(heights.count("307") == 0);
  CHECK(heights.at("214") == std::vector<std::string>{"missing: flooded"});
  CHECK(heights.at("105") == std::vector<std::string>{lines[4].height});
  // The flooded plot's note went with its only value.
  bool note_kept = false;
  for (const LiveObservation& x : s->live()) note_kept = note_kept || x.note == "flooded after storm 2026-06-03";
  CHECK(note_kept);

  SUBCASE("entered again: nothing is saved twice") {
    auto again = enter_sheet(*s, path, SheetOptions{});
    REQUIRE(again.ok());
    CHECK(again->count(SheetItem::Kind::already_saved) == 158);
    CHECK(again->count(SheetItem::Kind::saved) == 0);
    CHECK(again->count(SheetItem::Kind::waiting) == 1);
    CHECK(log_rows(db) == 158);
  }
  SUBCASE("confirmed as written: 8.3 is saved with the checks answered") {
    SheetOptions o;
    o.confirm.insert({48, "height_cm"});
    auto again = enter_sheet(*s, path, o);
    REQUIRE(again.ok());
    CHECK(item_at(*again, 48, "height_cm")->kind == SheetItem::Kind::confirmed);
    CHECK(log_rows(db) == 159);
    const auto h = live_by_plot(*s, "height_cm");
    CHECK(h.at("307") == std::vector<std::string>{"8.3"});
    for (const LiveObservation& x : s->live())
      if (x.value == std::optional<std::string>("8.3")) CHECK(x.confirmed_checks.find("decimal_slip") != std::string::npos);
  }
  SUBCASE("the suggestion taken: 83 is saved; the sheet's 8.3 then asks before replacing it") {
    SheetOptions o;
    std::vector<SheetQuestion> asked;
    o.ask = [&](const SheetQuestion& q) {
      asked.push_back(q);
      return SheetAnswer::save_suggestion;
    };
    auto again = enter_sheet(*s, path, o);
    REQUIRE(again.ok());
    REQUIRE(asked.size() == 1);
    CHECK(asked[0].line == 48);
    CHECK(asked[0].can_confirm);
    CHECK(item_at(*again, 48, "height_cm")->kind == SheetItem::Kind::suggestion);
    CHECK(live_by_plot(*s, "height_cm").at("307") == std::vector<std::string>{"83"});
    // The paper's figure stays on record beside the value saved.
    bool traced = false;
    for (const LiveObservation& x : s->live())
      traced = traced || (x.value == std::optional<std::string>("83") &&
                          x.note.find("sheet line 48 reads 8.3; saved 83 as suggested") != std::string::npos);
    CHECK(traced);
    auto third = enter_sheet(*s, path, SheetOptions{});
    REQUIRE(third.ok());
    const SheetItem* replace = item_at(*third, 48, "height_cm");
    CHECK(replace->kind == SheetItem::Kind::waiting);
    CHECK(replace->message.find("already holds 83") != std::string::npos);
    CHECK(log_rows(db) == 159);
  }
}

TEST_CASE("S1: a wrong header saves nothing and names the file, line and field") {
  const std::string db = test::fresh_demo_trial("sheet_header.furrow");
  auto s = RecordSession::open(db, "Ana Pell");
  REQUIRE(s.ok());
  struct Case {
    std::string text, expect;
  } cases[] = {
      {"plot,height,note\n101,96,\n", ":1: field 'height' is not a column of this trial's sheet"},
      {"block,height_cm\n1,96\n", ":1: the header has no 'plot' column"},
      {"plot,block,note\n101,1,x\n", ":1: the header names no trait of this trial"},
      {"plot,height_cm,height_cm\n101,96,96\n", "appears twice in the header"},
      {"plot,height_cm\n101,96\n102\n", ":3: expected 2 fields as in the header, found 1"},
      {"plot,height_cm\n101,\"96\n", "a quoted field is never closed"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.text);
    const std::string path = write_sheet("header.csv", c.text);
    auto r = enter_sheet(*s, path, SheetOptions{});
    REQUIRE_FALSE(r.ok());
    CHECK(r.problem().message.rfind(path, 0) == 0);
    CHECK(r.problem().message.find(c.expect) != std::string::npos);
    CHECK(r.problem().message.find("nothing was saved") != std::string::npos);
  }
  CHECK(log_rows(db) == 0);
  SheetOptions other_occasion;
  other_occasion.occasion = 2;
  auto r = enter_sheet(*s, write_sheet("occ.csv", "plot,height_cm\n101,96\n"), other_occasion);
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("field 'height_cm': height_cm has 1 occasion(s), not occasion 2") != std::string::npos);
}

TEST_CASE("S2, S3, S4, S5: wrong places, disagreeing duplicates, values already held, stake codes") {
  const std::string db = test::fresh_demo_trial("sheet_rules.furrow");
  auto s = RecordSession::open(db, "Ana Pell");
  REQUIRE(s.ok());
  // The tablet already saved plot 101's height as 96 and plot 102's as 104.
  for (auto [plot, value] : {std::pair{"101", "96"}, std::pair{"102", "104"}}) {
    REQUIRE(s->jump_to(plot).ok());
    REQUIRE(s->set_trait("height_cm").ok());
    REQUIRE(s->enter(value).kind == EntryOutcome::Kind::saved);
  }
  const std::string code = stake_code_text({s->trial().uid, s->trial().plan.name, "104"});
  const std::string other = stake_code_text({"0123456789abcdef0123456789abcdef", "Another trial", "104"});
  const std::string text = "plot,block,field_row,field_column,entry,height_cm,stand_count\n"
                           "101,1,1,1,Quillon,96.0,229\n"      // 2: height already held (96 = 96.0), stand new
                           "102,,,,,100,\n"                    // 3: held 104, sheet 100: asks
                           "103,1,1,4,Caddis,98,235\n"         // 4: plot 103 is in column 3: line refused
                           "105,1,1,5,Skerry,85,243\n"         // 5: plot 105 also on 6 with another height
                           "105,1,1,5,Skerry,86,243\n"         // 6
                           "\"" + code + "\",1,1,4,Wetherby,101,254\n"   // 7: a scanned stake of this trial
                           "\"" + other + "\",,,,,101,\n"      // 8: another trial's stake
                           "106,1,1,6,Alder Gold,missing,\n";  // 9: no reason given
  const std::string path = write_sheet("rules.csv", text);
  auto r = enter_sheet(*s, path, SheetOptions{});
  REQUIRE(r.ok());
  CHECK(item_at(*r, 2, "height_cm")->kind == SheetItem::Kind::already_saved);
  CHECK(item_at(*r, 2, "stand_count")->kind == SheetItem::Kind::saved);
  const SheetItem* held = item_at(*r, 3, "height_cm");
  CHECK(held->kind == SheetItem::Kind::waiting);
  CHECK(held->message.find("already holds 104 by Ana Pell; the sheet says 100 (saving replaces it)") != std::string::npos);
  const SheetItem* place = item_at(*r, 4, "field_column");
  REQUIRE(place);
  CHECK(place->kind == SheetItem::Kind::refused);
  CHECK(place->message.find("the sheet says field_column 4, but plot 103 has field_column 3") != std::string::npos);
  CHECK(item_at(*r, 4, "height_cm") == nullptr);
  for (int line : {5, 6}) {
    const SheetItem* d = item_at(*r, line, "height_cm");
    REQUIRE(d);
    CHECK(d->kind == SheetItem::Kind::refused);
    CHECK(d->message.find("plot 105 is on lines 5, 6 with different height_cm (85, 86): saved from none of them") !=
          std::string::npos);
  }
  CHECK(item_at(*r, 5, "stand_count")->kind == SheetItem::Kind::saved);
  CHECK(item_at(*r, 6, "")->kind == SheetItem::Kind::duplicate);
  CHECK(item_at(*r, 7, "height_cm")->kind == SheetItem::Kind::saved);
  CHECK(item_at(*r, 7, "height_cm")->plot == "104");
  CHECK(item_at(*r, 8, "plot")->message.find("this stake belongs to the trial 'Another trial' (plot 104)") != std::string::npos);
  CHECK(item_at(*r, 9, "height_cm")->message.find("write the reason after 'missing:'") != std::string::npos);
  const auto h = live_by_plot(*s, "height_cm");
  CHECK(h.at("101") == std::vector<std::string>{"96"});
  CHECK(h.at("102") == std::vector<std::string>{"104"});
  CHECK(h.count("103") == 0);
  CHECK(h.count("105") == 0);
  CHECK(h.at("104") == std::vector<std::string>{"101"});
  // S5 confirmed: the sheet's value replaces this device's.
  SheetOptions o;
  o.confirm.insert({3, "*"});
  auto again = enter_sheet(*s, path, o);
  REQUIRE(again.ok());
  CHECK(item_at(*again, 3, "height_cm")->kind == SheetItem::Kind::confirmed);
  CHECK(live_by_plot(*s, "height_cm").at("102") == std::vector<std::string>{"100"});
}

// Randomised: sheets of the demo's values with lines repeated (some the same,
// some disagreeing), shuffled and entered several times. The model of what
// the paper says: a cell whose lines agree holds that value once; a cell whose
// lines disagree holds nothing. Every question is answered "save as written".
TEST_CASE("randomised sheets entered again and again save each agreed value exactly once") {
  const std::vector<DemoLine> demo = demo_lines();
  std::mt19937 rng(20261202);
  for (int round = 0; round < 6; ++round) {
    CAPTURE(round);
    const std::string db = test::fresh_demo_trial("sheet_random.furrow");
    auto s = RecordSession::open(db, "Ana Pell");
    REQUIRE(s.ok());
    std::vector<DemoLine> lines;
    std::map<std::string, std::set<std::string>> written;   // plot -> heights written
    std::uniform_int_distribution<int> pick(0, 79), coin(0, 9);
    for (int k = 0; k < 60; ++k) {
      DemoLine l = demo[static_cast<size_t>(pick(rng))];
      if (l.plot == "214") continue;
      l.stand.clear();
      l.note.clear();
      if (coin(rng) == 0) l.height = std::to_string(std::stoi(l.height.substr(0, l.height.find('.'))) + 1);   // misread
      lines.push_back(l);
      written[l.plot].insert(l.height);
    }
    std::shuffle(lines.begin(), lines.end(), rng);
    const std::string path = write_sheet("random.csv", sheet_text(lines));
    SheetOptions o;
    o.ask = [](const SheetQuestion& q) { return q.can_confirm ? SheetAnswer::save_as_written : SheetAnswer::leave; };
    int rows_after_first = -1;
    for (int entry = 0; entry < 3; ++entry) {
      auto r = enter_sheet(*s, path, o);
      REQUIRE(r.ok());
      if (entry == 0) rows_after_first = log_rows(db);
      else CHECK(log_rows(db) == rows_after_first);   // S4: again, nothing new
    }
    const auto live = live_by_plot(*s, "height_cm");
    int agreed = 0;
    for (const auto& [plot, values] : written) {
      CAPTURE(plot);
      if (values.size() == 1) {
        ++agreed;
        REQUIRE(live.count(plot));
        CHECK(live.at(plot) == std::vector<std::string>{*values.begin()});
      } else {
        CHECK(live.count(plot) == 0);
      }
    }
    CHECK(live.size() == static_cast<size_t>(agreed));
    CHECK(rows_after_first == agreed);
  }
}

TEST_CASE("the blank sheet lists every plot in walk order with the sheet's columns") {
  const std::string db = test::fresh_demo_trial("sheet_blank.furrow");
  auto open = open_trial_database(db, Access::read_only);
  REQUIRE(open.ok());
  const std::string csv = blank_sheet_csv(open->trial, {"stand_count", "height_cm"}, false);
  const CsvRead r = parse_csv_text(csv);
  REQUIRE(r.ok);
  REQUIRE(r.csv.table.records() == 80);
  std::vector<std::string> names;
  for (const DataColumn& c : r.csv.table.columns) names.push_back(c.name);
  CHECK(names == std::vector<std::string>{"plot", "block", "field_row", "field_column", "entry", "stand_count",
                                          "height_cm", "note"});
  for (size_t i = 0; i < 80; ++i) CHECK(r.csv.table.columns[0].cells[i] == open->trial.layout.plots[i].label);
  CHECK(r.csv.table.columns[4].cells[0] == "Quillon");
  const std::string blind = blank_sheet_csv(open->trial, {"height_cm"}, true);
  CHECK(blind.substr(0, blind.find('\n')) == "plot,block,field_row,field_column,height_cm,note");
  CHECK(blind.find("Quillon") == std::string::npos);
}

TEST_CASE("notes: a note-only line goes on the value already held, or is refused; a long note is refused by name") {
  const std::string db = test::fresh_demo_trial("sheet_notes.furrow");
  auto s = RecordSession::open(db, "Ana Pell");
  REQUIRE(s.ok());
  REQUIRE(s->jump_to("101").ok());
  REQUIRE(s->set_trait("height_cm").ok());
  REQUIRE(s->enter("96").kind == EntryOutcome::Kind::saved);
  const std::string text = "plot,height_cm,note\n"
                           "101,,lodged patch\n"            // 2: no value on the line; 101's height is held
                           "102,,just a note\n"             // 3: nothing held: refused
                           "103,98," + std::string(2100, 'x') + "\n"   // 4: note too long: the line refused
                           "104,101,\n";                    // 5: a plain value
  const std::string path = write_sheet("notes.csv", text);
  SheetOptions o;
  o.confirm.insert({9, "height_cm"});   // no such line: said, not ignored
  auto r = enter_sheet(*s, path, o);
  REQUIRE(r.ok());
  CHECK(item_at(*r, 2, "note")->kind == SheetItem::Kind::saved);
  bool noted = false;
  for (const LiveObservation& x : s->live()) noted = noted || (x.value == std::optional<std::string>("96") && x.note == "lodged patch");
  CHECK(noted);
  CHECK(item_at(*r, 3, "note")->kind == SheetItem::Kind::refused);
  CHECK(item_at(*r, 3, "note")->message.find("a note needs a value on its line") != std::string::npos);
  const SheetItem* long_note = item_at(*r, 4, "note");
  REQUIRE(long_note);
  CHECK(long_note->kind == SheetItem::Kind::refused);
  CHECK(long_note->message.find("the note is longer than 2000 bytes; nothing saved from this line") != std::string::npos);
  CHECK(item_at(*r, 4, "height_cm") == nullptr);
  CHECK(item_at(*r, 5, "height_cm")->kind == SheetItem::Kind::saved);
  const SheetItem* typo = item_at(*r, 9, "height_cm");
  REQUIRE(typo);
  CHECK(typo->message.find("--confirm-line names no value that asked for confirmation there") != std::string::npos);
  // Entered again: the note is held, nothing new.
  const int rows = log_rows(db);
  auto again = enter_sheet(*s, path, SheetOptions{});
  REQUIRE(again.ok());
  CHECK(item_at(*again, 2, "note") == nullptr);
  CHECK(log_rows(db) == rows);
}

TEST_CASE("two entries of one sheet through two sessions opened together save each value once") {
  const std::string db = test::fresh_demo_trial("sheet_twice.furrow");
  auto a = RecordSession::open(db, "Ana Pell");
  auto b = RecordSession::open(db, "Ben Oduya");
  REQUIRE(a.ok());
  REQUIRE(b.ok());
  const std::string path = write_sheet("twice.csv", sheet_text(demo_lines()));
  auto first = enter_sheet(*a, path, SheetOptions{});
  REQUIRE(first.ok());
  const int rows = log_rows(db);
  CHECK(rows == 158);
  // b opened before a saved anything: it reads the file again before each value.
  auto second = enter_sheet(*b, path, SheetOptions{});
  REQUIRE(second.ok());
  CHECK(second->count(SheetItem::Kind::already_saved) == 158);
  CHECK(log_rows(db) == rows);
}
