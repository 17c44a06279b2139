// furrow: the command-line entry point. Subcommands are thin: they parse
// arguments and hand over to core/ and storage/.

#include <CLI/CLI.hpp>
#include <cstdio>
#include <iostream>

#include "app/cli/cli_analyze.h"
#include "app/cli/cli_station.h"
#include "app/cli/cli_sync.h"
#include "app/cli/output_safety.h"
#include "app/cli/cli_trial.h"
#include "app/field/field_app.h"
#include "app/work/report.h"

int main(int argc, char** argv) {
  CLI::App app{"Furrow: plot-by-plot field trial data checks and interim analysis"};
  app.require_subcommand(1);

  furrow::AnalyzeRequest q;
  std::string response_list;
  std::string treatment_list;
  auto* analyze = app.add_subcommand("analyze", "Interim analysis of variance of a trait (CSV file or trial database)");
  std::string db_path, trait_code;
  int occasion = 1;
  auto* csv_opt = analyze->add_option("--csv", q.csv_path, "CSV file, one line per plot, first line column names");
  auto* db_opt = analyze->add_option("--db", db_path, "trial database (analysed with its own design)");
  csv_opt->excludes(db_opt);
  analyze->add_option("--trait", trait_code, "trait code (with --db)");
  analyze->add_option("--occasion", occasion, "occasion of a repeated trait (with --db, default 1)");
  analyze->add_option("--design", q.design, "crd | rcbd | latin | factorial | split-plot | multi-site");
  analyze->add_option("--response", response_list, "trait column(s) to analyse, comma separated");
  analyze->add_option("--treatment", treatment_list, "treatment column(s), comma separated");
  analyze->add_option("--block", q.block, "block (replicate) column");
  analyze->add_option("--row", q.row, "row column (Latin square)");
  analyze->add_option("--column", q.column, "column column (Latin square)");
  analyze->add_option("--main-plot", q.main_plot, "main-plot factor column (split-plot)");
  analyze->add_option("--sub-plot", q.sub_plot, "sub-plot factor column (split-plot)");
  analyze->add_option("--site", q.site, "site column (several sites)");
  analyze->add_flag("--sites-random", q.sites_random, "sites are a random sample: test treatments against site x treatment");
  analyze->add_flag("--treatments-random", q.treatments_random, "treatments (e.g. genotypes) are random: variance components and heritability");
  analyze->add_flag("--without-interaction", q.without_interaction,
                    "leave the treatment interaction out (main effects only), e.g. when an entry is missing at a site");
  analyze->add_option("--alpha", q.alpha, "significance level for LSD, HSD and letters (default 0.05)");
  analyze->add_option("--sums", q.sums, "sequential | partial (default partial)");
  analyze->add_option("--outliers", q.outliers, "threshold | holm (default threshold: |studentized residual| > 3)");
  analyze->add_flag("--json", q.json, "print one JSON object instead of tables");
  analyze->add_option("--method", q.method,
                      "anova | reml (default anova; reml: mixed model by REML, right with missing plots and for field trend)")
      ->check(CLI::IsMember({"anova", "reml"}));
  analyze->add_option("--field-trend", q.field_trend,
                      "off | test | always (reml only; default off): rows and columns correlated (AR1 x AR1), kept when a "
                      "likelihood-ratio test finds it")
      ->check(CLI::IsMember({"off", "test", "always"}));
  analyze->add_option("--row-position", q.row_position, "column with each plot's field row, a whole number (field trend)");
  analyze->add_option("--column-position", q.column_position,
                      "column with each plot's field column, a whole number (field trend)");
  analyze->add_option("--straight-trend", q.straight_trend,
                      "rows | columns | both: add a straight-line trend over the field (reml, with positions)")
      ->check(CLI::IsMember({"rows", "columns", "both"}));

  // trial new / trial show
  auto* trial = app.add_subcommand("trial", "Create or show a trial database");
  trial->require_subcommand(1);
  std::string plan_path, trial_db;
  auto* trial_new = trial->add_subcommand("new", "Randomise a plan file into a new trial database");
  trial_new->add_option("--plan", plan_path, "plan file (furrow-plan CSV)")->required();
  trial_new->add_option("--db", trial_db, "trial database to create")->required();
  auto* trial_show = trial->add_subcommand("show", "Show a trial's plan and progress");
  trial_show->add_option("--db", trial_db, "trial database")->required();
  auto* trial_close = trial->add_subcommand("close", "Mark the trial's collection as over");
  trial_close->add_option("--db", trial_db, "trial database")->required();
  std::string copy_from;
  auto* trial_copy = trial->add_subcommand("copy", "Make a device's copy of the station's trial (new device id)");
  trial_copy->add_option("--from", copy_from, "the station's trial database")->required();
  trial_copy->add_option("--db", trial_db, "the device's trial database to create")->required();
  furrow::DeviceEnrolment enrol_who;
  trial_copy->add_option("--by", enrol_who.by, "who enrols the device (kept at the station with its key)")->required();
  trial_copy->add_option("--label", enrol_who.label, "the device's name for people, e.g. \"Tablet 3\" (default: the file's name)");

  // labels
  std::string labels_db, labels_out, labels_sheet = "a4-3x8";
  bool labels_blind = false;
  auto* labels = app.add_subcommand("labels", "Write the stake labels (plot label, place, entry, QR code) as a PDF");
  labels->add_option("--db", labels_db, "trial database")->required();
  labels->add_option("--out", labels_out, "PDF file to write")->required();
  labels->add_option("--sheet", labels_sheet, "a4-3x8 (default), letter-3x10, or roll-WxH in millimetres");
  labels->add_flag("--blind", labels_blind, "leave the entry off (a trial scored blind)");

  // device list / revoke / enrol / renew
  auto* device = app.add_subcommand("device", "The devices a station's trial takes bundles from (keys, enrolment)");
  device->require_subcommand(1);
  std::string device_db, device_station, device_id, revoke_reason;
  bool device_json = false;
  auto* device_list = device->add_subcommand("list", "List the enrolled devices: keys, who enrolled them, what each brought");
  device_list->add_option("--db", device_db, "the station's trial database")->required();
  device_list->add_flag("--json", device_json, "JSON instead of text");
  auto* device_revoke = device->add_subcommand("revoke", "Refuse a device's later bundles (a lost or stolen tablet)");
  device_revoke->add_option("--db", device_db, "the station's trial database")->required();
  device_revoke->add_option("--device", device_id, "the device's id or label, as furrow device list shows them")->required();
  device_revoke->add_option("--by", enrol_who.by, "who revokes it")->required();
  device_revoke->add_option("--reason", revoke_reason, "why");
  auto* device_enrol = device->add_subcommand("enrol", "Enrol a device copy made before keys (both files at hand)");
  auto* device_renew = device->add_subcommand(
      "renew", "Give a copied device file a new identity at the station, keeping every row it recorded");
  for (auto* c : {device_enrol, device_renew}) {
    c->add_option("--station", device_station, "the station's trial database")->required();
    c->add_option("--db", device_db, "the device's trial database")->required();
    c->add_option("--by", enrol_who.by, "who does it (kept at the station)")->required();
    c->add_option("--label", enrol_who.label, "the device's name for people");
  }

  auto* device_today = device->add_subcommand(
      "today", "The day at the station: which devices synced today and when, which have not, what each brought");
  std::string today_data, today_day;
  bool today_json = false;
  device_today->add_option("--data", today_data, "the station's data folder (default: this machine's)");
  device_today->add_option("--day", today_day, "the day, YYYY-MM-DD in UTC (default today)");
  device_today->add_flag("--json", today_json, "JSON instead of text");

  // Sync over the local network, and backups.
  furrow::ServeRequest serve_req;
  auto* serve = app.add_subcommand("serve", "Serve this station's trials to its devices on the local network until stopped");
  serve->add_option("--data", serve_req.data, "the data folder whose station trials are served (default: this machine's)");
  serve->add_option("--listen", serve_req.listen, "the address to listen on (default 0.0.0.0: every network of this machine)");
  serve->add_option("--port", serve_req.port, "the port (default 47110; 0: any free port)");
  serve->add_option("--code", serve_req.code, "the pairing code (default: a new 6-digit code each start)");
  serve->add_option("--backup-to", serve_req.backup_to, "keep verified backups of every trial here (a second disk, a USB drive)");
  serve->add_option("--keep", serve_req.keep, "backups kept per trial (default 14)");
  serve->add_option("--timeout", serve_req.timeout_s, "seconds a silent device is waited for (default 30)");
  furrow::SyncCliRequest sync_req;
  auto* pair = app.add_subcommand("pair", "Pair this device with a station (once; then furrow sync), and sync");
  auto* sync = app.add_subcommand("sync", "Sync this device's trials with its station: send what it lacks, receive settlements");
  for (auto* c : {pair, sync}) {
    c->add_option("--data", sync_req.data, "this device's data folder (default: this machine's)");
    c->add_option("--db", sync_req.dbs, "a trial file to sync (default: every device trial in the data folder)");
    c->add_option("--station", sync_req.station, "the station's address, as it shows it (192.168.1.20 or 192.168.1.20:47110)");
    c->add_flag("--others", sync_req.others, "also receive every other device's values");
    c->add_option("--timeout", sync_req.timeout_s, "seconds a silent station is waited for (default 30)");
  }
  pair->add_option("--code", sync_req.code, "the pairing code the station shows")->required();
  std::vector<std::string> backup_dbs;
  std::string backup_data, backup_to, restore_from, restore_db;
  int backup_keep = 14;
  bool restore_replace = false;
  auto* backup = app.add_subcommand("backup", "Take verified backups of trial files (the way to copy a trial that is in use)");
  backup->add_option("--db", backup_dbs, "a trial file (default: every trial in the data folder)");
  backup->add_option("--data", backup_data, "the data folder (default: this machine's)");
  backup->add_option("--to", backup_to, "the backup folder")->required();
  backup->add_option("--keep", backup_keep, "backups kept per trial (default 14; 0: all)");
  auto* restore = app.add_subcommand("restore", "Restore a trial file from a checked backup");
  restore->add_option("--from", restore_from, "the backup file")->required();
  restore->add_option("--db", restore_db, "the trial file to restore")->required();
  restore->add_flag("--replace", restore_replace, "replace an existing file (kept beside it first)");

  // Day's end: bundles, merging, conflicts.
  std::string station_db, bundle_out;
  bool bundle_all = false, conflicts_json = false;
  std::vector<std::string> bundle_files;
  auto* bundle = app.add_subcommand("bundle", "Write the log rows the station has not seen to a bundle file");
  bundle->add_option("--db", station_db, "trial database")->required();
  bundle->add_option("--out", bundle_out, "bundle file to write")->required();
  bundle->add_flag("--all", bundle_all, "every row of the log, not only what the station has not seen");
  auto* merge = app.add_subcommand("merge", "Merge bundles into a trial database (any order, any number of times)");
  merge->add_option("--db", station_db, "trial database")->required();
  merge->add_option("bundles", bundle_files, "bundle files")->required();
  auto* conflicts = app.add_subcommand("conflicts", "List cells where devices recorded different values");
  conflicts->add_option("--db", station_db, "trial database")->required();
  conflicts->add_flag("--json", conflicts_json, "JSON instead of text");
  std::string report_db, report_out;
  furrow::ReportOptions report_options;
  auto* report = app.add_subcommand("report", "Write the trial's report as one self-contained HTML file");
  report->add_option("--db", report_db, "trial database")->required();
  report->add_option("--out", report_out, "HTML file to write")->required();
  report->add_option("--map-trait", report_options.map_trait, "trait code that colours the field map");
  report->add_option("--alpha", report_options.alpha, "significance level (default 0.05)");
  furrow::SettleRequest settle_req;
  auto* settle = app.add_subcommand("settle", "Settle one conflict with a new log row");
  settle->add_option("--db", settle_req.db, "trial database")->required();
  settle->add_option("--plot", settle_req.plot, "plot label")->required();
  settle->add_option("--trait", settle_req.trait, "trait code")->required();
  settle->add_option("--occasion", settle_req.occasion, "occasion (default 1)");
  settle->add_option("--keep", settle_req.keep, "keep this row's value: DEVICE/SEQUENCE as listed");
  settle->add_option("--keep-value", settle_req.keep_value, "keep the row that holds this value (no ids needed)");
  settle->add_option("--value", settle_req.value, "a new value (checked like an entry)");
  settle->add_option("--missing", settle_req.missing, "no value, with the reason");
  settle->add_option("--by", settle_req.by, "who settles")->required();
  settle->add_option("--note", settle_req.note, "why");

  furrow::RecordRequest rec;
  auto* record = app.add_subcommand("record", "Check and save one value (exit 2 refused, 3 needs --confirm)");
  record->add_option("--db", rec.db, "trial database")->required();
  record->add_option("--plot", rec.plot, "plot label as on the stake");
  record->add_option("--trait", rec.trait, "trait code");
  record->add_option("--occasion", rec.occasion, "occasion of a repeated trait (default 1)");
  record->add_option("--value", rec.value, "the value");
  record->add_option("--missing", rec.missing, "no value, with the reason (damaged, plants missing, flooded, ...)");
  record->add_option("--observer", rec.observer, "who measured")->required();
  record->add_option("--note", rec.note, "a note for this plot");
  record->add_flag("--confirm", rec.confirm, "save a value that needs confirmation");
  record->add_option("--from-sheet", rec.from_sheet,
                     "a typed-back field sheet (CSV: plot, trait columns as headed on the sheet, note): every value "
                     "checked as on the Record screen; a value already saved is not saved again");
  record->add_option("--confirm-line", rec.confirm_cells,
                     "with --from-sheet: save as written the values of LINE (or LINE:COLUMN) that need confirmation");
  record->add_flag("--ask", rec.ask, "with --from-sheet: ask about each value that needs confirmation on standard input");

  furrow::SheetsRequest sheets_req;
  auto* sheets = app.add_subcommand("sheets", "The walk as a printable field sheet (PDF), and the blank CSV to type it back");
  sheets->add_option("--db", sheets_req.db, "trial database")->required();
  sheets->add_option("--out", sheets_req.out, "PDF file to write")->required();
  sheets->add_option("--traits", sheets_req.traits, "trait codes, comma-separated, in the order printed (default every trait)")
      ->delimiter(',');
  sheets->add_option("--occasion", sheets_req.occasion, "occasion of repeated traits (default 1)");
  sheets->add_option("--paper", sheets_req.paper, "a4 (default) or letter");
  sheets->add_flag("--blind", sheets_req.blind, "leave the treatments off (the crew scores blind)");
  sheets->add_option("--csv", sheets_req.csv_out, "also write the blank CSV with the sheet's columns, in walk order");

  furrow::WalkRequest walk_req;
  auto* walk = app.add_subcommand("walk", "Show or choose today's walk on this device (traits, occasion, blocks)");
  walk->add_option("--db", walk_req.db, "trial database")->required();
  walk->add_option("--traits", walk_req.traits, "trait codes, comma-separated, in the order walked")->delimiter(',');
  walk->add_option("--occasion", walk_req.occasion, "occasion of repeated traits (default 1)");
  walk->add_option("--blocks", walk_req.blocks, "blocks walked today, comma-separated (default every block)")->delimiter(',');
  walk->add_flag("--every-trait-per-plot", walk_req.every_trait_per_plot, "record every walked trait on a plot before the next");

  std::string export_db, export_out;
  bool long_table = false, wide_table = false, layout_table = false;
  auto* exp = app.add_subcommand("export", "Write the layout or the data as CSV");
  exp->add_option("--db", export_db, "trial database")->required();
  auto* f_long = exp->add_flag("--long", long_table, "one line per observation");
  auto* f_wide = exp->add_flag("--wide", wide_table, "one line per plot, one column per trait and occasion");
  auto* f_layout = exp->add_flag("--layout", layout_table, "the field layout for maps and stake labels");
  f_long->excludes(f_wide)->excludes(f_layout);
  f_wide->excludes(f_layout);
  exp->add_option("--out", export_out, "file to write (default: standard output)");

  furrow::FieldAppOptions field_options;
  std::string field_size;
  auto* field = app.add_subcommand("field", "Open the touch app (on a trial database, else on the Trials screen)");
  field->add_option("--db", field_options.db, "trial database to open on the Record screen");
  field_options.demo_db = FURROW_DEMO_DB;
  field->add_option("--demo", field_options.demo_db, "the demo trial the Trials screen offers")->capture_default_str();
  field->add_option("--bench-frames", field_options.bench_frames,
                    "benchmark: draw this many frames, print frame times, exit");
  field->add_option("--observer", field_options.observer, "who is measuring (else the saved setting)");
  field->add_option("--screenshot", field_options.screenshot, "draw, save this PNG and exit (for checks)");
  field->add_option("--targets-out", field_options.targets_out,
                    "for checks: write every tappable item's label and rectangle here after each frame");
  field->add_option("--size", field_size, "window size WIDTHxHEIGHT (default 1280x800)");
  std::string field_screen;
  field->add_option("--screen", field_screen, "screen to open: trials, record (default), map, check, leaving, station, settings or help")
      ->check(CLI::IsMember({"trials", "record", "map", "check", "leaving", "station", "settings", "help"}));

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    app.exit(e);
    return 2;
  }
  auto split = [](const std::string& s) {
    std::vector<std::string> out;
    std::string cur;
    for (char c : s) {
      if (c == ',') { out.push_back(cur); cur.clear(); } else cur += c;
    }
    if (!s.empty()) out.push_back(cur);
    return out;
  };
  q.responses = split(response_list);
  q.treatments = split(treatment_list);
  if (field->parsed()) {
    if (!field_size.empty() &&
        std::sscanf(field_size.c_str(), "%dx%d", &field_options.width, &field_options.height) != 2) {
      std::cerr << "field: --size is WIDTHxHEIGHT, for example 800x1280\n";
      return 2;
    }
    if (!field_screen.empty()) field_options.start_screen = field_screen;
    return furrow::run_field_app(field_options);
  }
  if (trial_new->parsed()) return furrow::run_trial_new(plan_path, trial_db);
  if (trial_show->parsed()) return furrow::run_trial_show(trial_db);
  if (trial_copy->parsed()) return furrow::run_trial_copy(copy_from, trial_db, enrol_who);
  if (labels->parsed()) return furrow::run_labels(labels_db, labels_out, labels_sheet, labels_blind);
  if (device_list->parsed()) return furrow::run_device_list(device_db, device_json);
  if (device_revoke->parsed()) return furrow::run_device_revoke(device_db, device_id, enrol_who.by, revoke_reason);
  if (device_enrol->parsed()) return furrow::run_device_enrol(device_station, device_db, enrol_who);
  if (device_renew->parsed()) return furrow::run_device_renew(device_station, device_db, enrol_who);
  if (trial_close->parsed()) return furrow::run_trial_close(trial_db);
  if (device_today->parsed()) return furrow::run_device_today(today_data, today_day, today_json);
  if (serve->parsed()) return furrow::run_serve(serve_req);
  if (pair->parsed()) return furrow::run_pair(sync_req);
  if (sync->parsed()) return furrow::run_sync(sync_req);
  if (backup->parsed()) return furrow::run_backup(backup_dbs, backup_data, backup_to, backup_keep);
  if (restore->parsed()) return furrow::run_restore(restore_from, restore_db, restore_replace);
  if (bundle->parsed()) return furrow::run_bundle(station_db, bundle_out, bundle_all);
  if (merge->parsed()) return furrow::run_merge(station_db, bundle_files);
  if (conflicts->parsed()) return furrow::run_conflicts(station_db, conflicts_json);
  if (settle->parsed()) return furrow::run_settle(settle_req);
  if (report->parsed()) {
    if (auto s = furrow::write_report(report_db, report_out, report_options); !s) {
      std::cerr << furrow::terminal_safe(furrow::named_once(s.problem().message)) << "\n";
      return 2;
    }
    std::cout << "report written to " << report_out << "\n";
    return 0;
  }
  if (record->parsed()) return furrow::run_record(rec);
  if (sheets->parsed()) return furrow::run_sheets(sheets_req);
  if (walk->parsed()) return furrow::run_walk(walk_req);
  if (exp->parsed()) {
    if (!long_table && !wide_table && !layout_table) {
      std::cerr << "export: choose --long, --wide or --layout\n";
      return 2;
    }
    return furrow::run_export(export_db, long_table ? "long" : wide_table ? "wide" : "layout", export_out);
  }
  if (analyze->parsed()) {
    if (!db_path.empty()) {
      if (trait_code.empty()) {
        std::cerr << "analyze: --db needs --trait CODE\n";
        return 2;
      }
      if (!q.straight_trend.empty() || q.treatments_random || q.sites_random || !q.row_position.empty() ||
          !q.column_position.empty() || !q.design.empty()) {
        std::cerr << "analyze: a trial database is analysed with its own design and field positions; --design, "
                     "--treatments-random, --sites-random, --straight-trend and the position columns are for --csv\n";
        return 2;
      }
      if (!(q.alpha >= 0.01 && q.alpha <= 0.10)) {
        std::cerr << "analyze: --alpha must lie between 0.01 and 0.10 (e.g. 0.05): the range over which the "
                     "studentized-range quantiles are checked\n";
        return 2;
      }
      return furrow::run_analyze_db(db_path, trait_code, occasion, q.json, q.alpha, q.sums, q.without_interaction,
                                    q.method, q.field_trend);
    }
    if (q.csv_path.empty() || q.design.empty() || response_list.empty()) {
      std::cerr << "analyze: give --db FILE --trait CODE, or --csv FILE --design KIND --response COL\n";
      return 2;
    }
    return furrow::run_analyze(q);
  }
  return 2;
}
