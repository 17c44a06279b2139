#include "app/field/field_app_state.h"
#include "app/work/glossary.h"

#include <imgui.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <optional>

#include "app/work/field_map.h"
#include "app/work/record_session.h"
#include "app/field/screens/check_screen.h"
#include "app/field/screens/help_screen.h"
#include "app/field/screens/leaving_screen.h"
#include "app/field/screens/map_screen.h"
#include "app/field/screens/record_screen.h"
#include "app/field/screens/settings_screen.h"
#include "app/field/screens/station_screen.h"
#include "app/field/screens/trials_screen.h"
#include "app/field/screens/widgets.h"
#include "app/field/settings.h"
#include "app/print/field_sheet.h"
#include "app/print/stake_labels.h"
#include "app/work/sheet_entry.h"
#include "storage/text_file.h"
#include "app/work/station.h"
#include "app/work/sync.h"
#include "platform/net.h"
#include "app/work/trial_analysis.h"
#include "core/entry_checks.h"
#include "storage/bundle.h"
#include "storage/settle.h"
#include "platform/data_folder.h"

namespace furrow {
namespace {

// How often the app looks whether another program changed the trial file.
constexpr double kFreshCheckSeconds = 0.25;




struct Tab {
  const char* label;
  Screen screen;
  bool needs_trial;
};
constexpr Tab kTabs[] = {{"Trials", Screen::trials, false},       {"Record", Screen::record, true},
                         {"Field map", Screen::map, true},        {"Check", Screen::check, true},
                         {"Before leaving", Screen::leaving, true}, {"Station", Screen::station, false},
                         {"Settings", Screen::settings, false},      {"Help", Screen::help, false}};


// Everything the app holds between frames. Derived views (the Before
// leaving list, the map, the analysis) are kept until the log, the trait or
// the colouring changes.
class FieldApp final : public FieldAppState {
 public:
  FieldApp(const FieldAppOptions& o, Settings settings, std::string settings_path, std::string folder)
      : options_(o), settings_(std::move(settings)), settings_path_(std::move(settings_path)),
        folder_(std::move(folder)), theme_(make_theme(settings_.theme)) {}

  // Opens a trial database; on failure the current trial stays open.
  Status open_trial(const std::string& path) {
    auto s = RecordSession::open(path, observer());
    if (!s) return make_problem(path + ": " + s.problem().message);
    session_.emplace(std::move(s).value());
    session_->set_blind(settings_.blind_scoring);
    trial_path_ = path;
    if (!folder_.empty() && std::filesystem::path(path).parent_path() != std::filesystem::path(folder_))
      trial_path_ = std::filesystem::absolute(path).lexically_normal().string();
    // A trial opened from outside the data folder stays on the Trials list.
    if (auto r = remember_trial(folder_, path); !r) std::cerr << r.problem().message << "\n";
    record_ui_ = RecordScreenState{};
    map_.reset();
    analysis_.reset();
    leaving_.reset();
    return ok_status();
  }

  void set_screen(Screen s) {
    if (s != Screen::record && screen_ == Screen::record && session_) {
      // E1: leaving the Record screen leaves the cell.
      session_->drop_entry();
      record_ui_.banner = session_->view().notice;
      record_ui_.tone = record_ui_.banner.empty() ? RecordScreenState::Tone::none : RecordScreenState::Tone::refuse;
      record_ui_.held_keys.clear();
    }
    screen_ = s;
    if (s == Screen::trials) trials_.reset();
    if (s == Screen::station) station_.reset();
  }
  // Work is under way that needs frames without waiting for input.
  // Until its outcome has been drawn once, so that the screen never waits for
  // a touch to show the new state.
  bool busy() const { return (import_ && (!import_->done() || !import_reported_)) || sync_job_; }
  bool has_trial() const { return session_.has_value(); }
  const std::string& trial_name() const { return session_->trial().plan.name; }

  // Draws one frame's screens; returns changed settings, if any.
  Screen screen() const { return screen_; }
  std::vector<TapTarget> targets() const {
    std::vector<TapTarget> all = nav_targets_;
    if (nav_menu_open_) return all;   // the list of screens covers the screen
    const std::vector<TapTarget>* own = nullptr;
    switch (screen_) {
      case Screen::trials: own = &trials_ui_.targets; break;
      case Screen::record: own = &record_ui_.targets; break;
      case Screen::map: own = &map_ui_.targets; break;
      case Screen::check: own = &check_ui_.targets; break;
      case Screen::leaving: own = &leaving_ui_.targets; break;
      case Screen::station: own = &station_ui_.targets; break;
      case Screen::settings: own = &settings_ui_.targets; break;
      case Screen::help: own = &help_targets_; break;
    }
    if (own) all.insert(all.end(), own->begin(), own->end());
    return all;
  }
  const RecordSession* session() const { return session_ ? &*session_ : nullptr; }
  const RecordScreenState& record_state() const { return record_ui_; }

  std::optional<Settings> draw(float scale) {
    refresh_views();
    const float top = draw_navigation(scale);
    if (nav_menu_open_) return std::nullopt;   // the list of screens fills the window
    if (!session_ && kTabs[static_cast<int>(screen_)].needs_trial) screen_ = Screen::trials;
    switch (screen_) {
      case Screen::trials: draw_trials(scale, top); break;
      case Screen::record: {
        const RecordView view = session_->view();
        const auto commands = draw_record_screen(view, session_->trial(), session_->walk(), saved_question(view),
                                                 theme_, scale, &record_ui_, top);
        for (const RecordCommand& c : commands) apply_record_command(c, *session_, &record_ui_);
        break;
      }
      case Screen::map: draw_map(scale, top); break;
      case Screen::check: draw_check(scale, top); break;
      case Screen::leaving: {
        const BeforeLeaving& list = before_leaving();
        if (auto item = draw_leaving_screen(list, session_->walk().describe(session_->trial()), theme_, scale, top,
                                            &leaving_ui_))
          open_plot(item->plot_index, item->trait_index, item->occasion);
        break;
      }
      case Screen::help: draw_help_screen(theme_, scale, top); break;
      case Screen::station: draw_station(scale, top); break;
      case Screen::settings: return draw_settings_screen(settings_, theme_, scale, top, &settings_ui_);
    }
    return std::nullopt;
  }

  void apply_settings(const Settings& changed) {
    settings_ = changed;
    theme_ = make_theme(settings_.theme);
    map_.reset();   // colours come from the theme
    if (session_) {
      session_->set_blind(settings_.blind_scoring);
      if (!settings_.observer.empty()) session_->set_observer(settings_.observer);
    }
    leaving_.reset();   // alpha changes the outliers
    question_list_.reset();
    analysis_.reset();
    if (!settings_path_.empty())
      if (auto s = save_settings(settings_path_, settings_); !s) std::cerr << s.problem().message << "\n";
  }

  const Theme& theme() const { return theme_; }
  const Settings& settings() const { return settings_; }

 private:
  // Fresh views: when another program changed the trial file (a merge, a
  // settlement from the command line), read the log again and drop every
  // derived view. PRAGMA data_version makes the check cheap; it runs at most
  // every kFreshCheckSeconds.
  void refresh_views() {
    if (!session_) return;
    const double now = ImGui::GetTime();
    if (now - last_fresh_check_ < kFreshCheckSeconds && last_fresh_check_ >= 0) return;
    last_fresh_check_ = now;
    auto changed = session_->refresh_if_changed();
    if (!changed || !*changed) return;
    map_.reset();
    analysis_.reset();
    leaving_.reset();
    station_.reset();
    trials_.reset();
  }

  // What Before leaving asks about the Record screen's saved value (an
  // outlier or a value to check), whatever today's walk is, so that the
  // banner can say it and offer "Value is right"; empty when nothing. Worked
  // out only when the cell holds one saved value and nothing is typed, and
  // kept until the log, trait or occasion change.
  std::string saved_question(const RecordView& v) {
    if (!v.current || !v.typed.empty() || v.current->rfind("missing", 0) == 0 || *v.current == "CONFLICT") return {};
    for (const LeavingItem& item : trait_list().items)
      if (item.plot_index == session_->plot_index() && item.trait_index == session_->trait_index() &&
          item.occasion == session_->occasion() &&
          (item.has(LeavingItem::Kind::outlier) || item.has(LeavingItem::Kind::flagged)))
        return item.message + ". If it is right, tap " + term::kValueIsRight + ".";
    return {};
  }

  // Before leaving for the session's trait and occasion on every plot,
  // whatever today's walk (the status map's marks and the Record screen's
  // question share it), kept until the log, trait or occasion change.
  const BeforeLeaving& trait_list() {
    const Key key{session_->trait_index(), session_->occasion(), session_->revision(), 0};
    if (!question_list_ || !(question_key_ == key)) {
      const StoredTrial& t = session_->trial();
      question_list_ = furrow::before_leaving(
          t, session_->live(), settings_.alpha,
          Walk(t, WalkChoice{{t.plan.traits[key.trait].code}, key.occasion, {}, false}));
      question_key_ = key;
    }
    return *question_list_;
  }

  std::string observer() const { return options_.observer.empty() ? settings_.observer : options_.observer; }

  // The bar of screens; wraps to a second row in a narrow window. Returns
  // where the screens start.
  float draw_navigation(float scale) {
    const ImGuiViewport* vp = ImGui::GetMainViewport();
    const float h = touch_px(scale) * 1.25f;
    ImGui::SetNextWindowPos(vp->WorkPos);
    ImGui::SetNextWindowSize(ImVec2(vp->WorkSize.x, nav_height_ > 0 ? std::min(nav_height_, vp->WorkSize.y) : h * 2));
    ImGui::PushStyleColor(ImGuiCol_WindowBg, to_imgui(theme_.panel));
    ImGui::Begin("##screens", nullptr, ImGuiWindowFlags_NoDecoration | ImGuiWindowFlags_NoMove |
                                           ImGuiWindowFlags_NoSavedSettings);
    nav_targets_.clear();
    // With large text the tabs would take several rows (most of a small
    // screen): one "Screens" button then opens them as a list instead.
    const float avail = ImGui::GetContentRegionAvail().x;
    int rows = 1;
    for (float x = 0; const Tab& tab : kTabs) {
      const float w = button_width(tab.label, scale);
      if (x > 0 && x + w > avail) {
        ++rows;
        x = 0;
      }
      x += w + ImGui::GetStyle().ItemSpacing.x;
    }
    const bool compact = rows > 2 || rows * h > 0.22f * vp->WorkSize.y;
    if (!compact) nav_menu_open_ = false;
    const auto tab_look = [&](const Tab& tab) {
      const bool current = screen_ == tab.screen;
      const bool usable = session_ || !tab.needs_trial;
      // A tab that cannot be used (no trial open) is flat on the bar, not a button.
      ButtonLook look{current ? theme_.accent : usable ? theme_.background : theme_.panel,
                      current ? theme_.accent_text : usable ? theme_.text : theme_.muted_text};
      // A usable tab has an edge (a white button on the pale bar would not show as one).
      if (usable && !current) {
        look.border_px = 2.0f * scale;
        look.border = theme_.text;
      }
      return look;
    };
    if (compact && !nav_menu_open_) {
      const std::string label = std::string("Screens: ") + kTabs[static_cast<int>(screen_)].label + "##menu";
      if (solid_button(label.c_str(), ImVec2(avail, h), ButtonLook{theme_.background, theme_.text}, &nav_targets_,
                       "Screens"))
        nav_menu_open_ = true;
    } else {
      bool first = true;
      for (const Tab& tab : kTabs) {
        const float w = compact ? avail : button_width(tab.label, scale);
        if (!first && !compact) flow_next(w);
        first = false;
        const bool usable = session_ || !tab.needs_trial;
        if (solid_button(tab.label, ImVec2(w, h), tab_look(tab), &nav_targets_) && usable) {
          set_screen(tab.screen);
          leaving_.reset();   // opened afresh each time
          nav_menu_open_ = false;
        }
      }
    }
    const float used = ImGui::GetCursorPosY() + ImGui::GetStyle().WindowPadding.y - ImGui::GetStyle().ItemSpacing.y;
    ImGui::End();
    ImGui::PopStyleColor();
    nav_height_ = used;
    return used;
  }

  std::string bundle_folder() const { return bundle_folders(folder_).incoming; }
  std::string outgoing_folder() const { return bundle_folders(folder_).outgoing; }
  std::string export_folder() const { return folder_ + "/exports"; }

  // The sync part of the Station screen, and a finished sync's outcome.
  void fill_sync_view() {
    StationView::Sync& v = station_->sync;
    const StoredTrial* t = session_ ? &session_->trial() : nullptr;
    v.station_trial = t && t->role == "station";
    v.device_trial = t && t->role == "device";
    v.serving = server_ != nullptr;
    if (server_) {
      const std::string addresses = local_addresses();
      v.serving_words = "Serving this station's trials: address " + (addresses.empty() ? "this machine" : addresses) +
                        ", port " + std::to_string(server_->port()) + ", pairing code " + code_for_people(server_->pairing_code());
      v.sessions = server_->active();
    }
    if (v.station_trial) {
      // The day's view, read again every few seconds while the screen is open.
      const double now = ImGui::GetTime();
      if (last_day_read_ < 0 || now - last_day_read_ > 2.0 || v.day.empty()) {
        last_day_read_ = now;
        auto day = station_day(std::filesystem::path(trial_path_).parent_path().string(), utc_now().substr(0, 10));
        if (day) {
          v.day.clear();
          for (const DeviceDay& d : *day)
            if (d.trial_uid == t->uid) v.day.push_back(d);
        }
      }
    }
    if (v.device_trial) {
      auto p = load_pairing(folder_);
      v.paired_with = p && *p ? (*p)->host + ":" + std::to_string((*p)->port) : "";
    }
    v.syncing = sync_job_ != nullptr;
    if (sync_job_) {
      v.done = sync_job_->progress.done.load();
      v.total = sync_job_->progress.total.load();
      if (sync_job_->done()) {
        auto r = sync_job_->result();
        if (r) {
          std::string refusals;
          for (const SyncTrialResult& tr : r->trials)
            if (!tr.accepted) refusals += "; " + tr.name + " refused: " + tr.refusal;
          station_ui_.message = "Synced with " + sync_job_->host() + ": " + r->summary() + refusals;
          station_ui_.message_is_problem = !refusals.empty();
          station_ui_.pairing = false;
          station_ui_.pairing_code[0] = 0;
        } else {
          station_ui_.message = "Sync stopped: " + r.problem().message + " (what was merged before stays; sync again)";
          station_ui_.message_is_problem = true;
        }
        sync_job_.reset();
        v.syncing = false;
        if (session_) {
          (void)session_->refresh();
          map_.reset();
          analysis_.reset();
          leaving_.reset();
        }
      }
    }
  }

  void draw_station(float scale, float top) {
    if (import_) {
      if (!import_->done()) {
        import_->step();   // one bundle per frame: the progress bar moves
      } else if (!import_reported_) {
        import_reported_ = true;
        station_.reset();
        if (session_) {
          (void)session_->refresh();
          map_.reset();
          analysis_.reset();
          leaving_.reset();
        }
        int merged = 0, refused = 0;
        for (const auto& o : import_->outcomes()) {
          merged += o.merged;
          refused += o.refused;
        }
        const int waiting = static_cast<int>(import_->total()) - merged - refused;
        station_ui_.message = "Read " + std::to_string(import_->total()) + " of " + std::to_string(import_->total()) +
                              " bundles from " + bundle_folder() + ": " + std::to_string(merged) + " merged (moved to done), " +
                              std::to_string(refused) + " refused (moved to refused)" +
                              (waiting ? ", " + std::to_string(waiting) + " for a trial not on this device (left in incoming)" : "");
        station_ui_.message_is_problem = merged < static_cast<int>(import_->total());
      }
    }
    if (!station_) {
      station_.emplace();
      station_->bundle_folder = bundle_folder();
      station_->outgoing_folder = outgoing_folder();
      station_->export_folder = export_folder();
      station_->trials = list_trials(folder_);
      station_->trial = session_ ? &session_->trial() : nullptr;
      if (session_) {
        auto open = open_trial_database(trial_path_);
        if (open) {
          auto c = list_conflicts(open->db, open->trial);
          if (c) station_->conflicts = std::move(c).value();
          auto d = device_records(open->db);
          if (d) station_->devices = std::move(d).value();
        }
      }
    }
    station_->importing = import_ && (!import_->done() || !import_reported_);
    fill_sync_view();
    if (import_) {
      station_->imported = import_->finished();
      station_->to_import = import_->total();
      station_->importing_file = import_->current_file();
      station_->outcomes = import_->outcomes();
    }
    const auto action = draw_station_screen(*station_, theme_, scale, top, &station_ui_);
    if (!action) return;
    const auto report = [&](const Result<std::string>& r, const std::string& what) {
      station_ui_.message = r ? what + " " + *r : r.problem().message;
      station_ui_.message_is_problem = !r;
    };
    switch (action->kind) {
      case StationAction::Kind::import_bundles:
        std::filesystem::create_directories(bundle_folder());
        {
          const BundleFolders folders = bundle_folders(folder_);
          std::vector<std::string> also = known_trials(folder_);
          if (!trial_path_.empty()) also.push_back(trial_path_);
          import_.emplace(bundle_folder(), folder_, also, &folders);
        }
        import_reported_ = false;
        station_ui_.message.clear();
        break;
      case StationAction::Kind::write_bundle: report(write_device_bundle(trial_path_, outgoing_folder()), "Bundle written:"); break;
      case StationAction::Kind::export_data:
        report(export_clean_data(trial_path_, export_folder()), "Data written:");
        if (!station_ui_.message_is_problem && !station_->conflicts.empty())
          station_ui_.message += " (" + count_of(static_cast<long>(station_->conflicts.size()), term::kConflict) +
                                 " not settled yet " + (station_->conflicts.size() == 1 ? "is" : "are") +
                                 " marked in it: settle and export again)";
        break;
      case StationAction::Kind::export_report: report(export_report(trial_path_, export_folder()), "Report written:"); break;
      case StationAction::Kind::write_labels: {
        // A4, 3 x 8 labels, walk order; the entry left off when this device scores blind.
        const std::string out =
            (std::filesystem::path(export_folder()) / (std::filesystem::path(trial_path_).stem().string() + "-labels.pdf"))
                .string();
        std::error_code ec;
        std::filesystem::create_directories(export_folder(), ec);
        const Status w = write_stake_labels(session_->trial(), *label_sheet("a4-3x8"), settings_.blind_scoring, out);
        station_ui_.message = w ? "Stake labels written: " + out + " (A4, 3 x 8 labels of 70 x 37 mm; print at 100 %)"
                                : w.problem().message;
        station_ui_.message_is_problem = !w;
        break;
      }
      case StationAction::Kind::write_sheet: {
        // Today's walk's traits and occasion on A4, every plot in walk order,
        // with the blank CSV to type it back into beside it.
        const StoredTrial& trial = session_->trial();
        const std::string stem =
            (std::filesystem::path(export_folder()) / (std::filesystem::path(trial_path_).stem().string() + "-sheet")).string();
        const WalkChoice walk = session_->walk().choice(trial);
        FieldSheetRequest request;
        request.occasion = walk.occasion;
        request.blind = settings_.blind_scoring;
        request.printed_on = local_date_today();
        std::vector<std::string> columns;
        for (const std::string& code : walk.trait_codes)
          for (size_t k = 0; k < trial.plan.traits.size(); ++k)
            if (trial.plan.traits[k].code == code) {
              request.traits.push_back(k);
              columns.push_back(sheet_column(trial.plan.traits[k], walk.occasion));
            }
        std::error_code ec;
        std::filesystem::create_directories(export_folder(), ec);
        auto sheet = write_field_sheet(trial, *sheet_paper("a4"), request, stem + ".pdf");
        Status csv = sheet ? write_text_file(stem + ".csv", blank_sheet_csv(trial, columns, request.blind))
                           : Status(sheet.problem());
        station_ui_.message = csv ? "Field sheet written: " + stem + ".pdf (" + std::to_string(sheet->pages) +
                                        " A4 pages of today's walk; print at 100 %) and the blank " + stem +
                                        ".csv to type it back"
                                  : csv.problem().message;
        station_ui_.message_is_problem = !csv;
        break;
      }
      case StationAction::Kind::start_serving: {
        StationConfig config;
        config.data_folder = std::filesystem::path(trial_path_).parent_path().string();
        if (const char* code = std::getenv("FURROW_PAIRING_CODE")) config.pairing_code = code;   // fixed, for checks
        const char* port = std::getenv("FURROW_SYNC_PORT");
        auto server = SyncServer::start(config, "0.0.0.0", port ? std::atoi(port) : kDefaultSyncPort, 30);
        if (!server) {
          station_ui_.message = server.problem().message;
          station_ui_.message_is_problem = true;
        } else {
          server_ = std::move(server).value();
          station_ui_.message.clear();
        }
        break;
      }
      case StationAction::Kind::stop_serving:
        server_.reset();   // waits for the sessions under way
        station_ui_.message = "Stopped serving; devices can sync again once you serve";
        station_ui_.message_is_problem = false;
        break;
      case StationAction::Kind::sync_now: {
        std::string host;
        int port = kDefaultSyncPort;
        std::string token;
        if (!action->text.empty()) {
          auto hp = parse_host_port(action->text, kDefaultSyncPort);
          if (!hp) {
            station_ui_.message = hp.problem().message;
            station_ui_.message_is_problem = true;
            break;
          }
          host = hp->first;
          port = hp->second;
        } else if (auto p = load_pairing(folder_); p && *p) {
          host = (*p)->host;
          port = (*p)->port;
          token = (*p)->token;
        }
        SyncRequest request;
        request.trial_paths = device_trial_files(std::filesystem::path(trial_path_).parent_path().string());
        if (std::find(request.trial_paths.begin(), request.trial_paths.end(), trial_path_) == request.trial_paths.end())
          request.trial_paths.push_back(trial_path_);
        request.token = token;
        request.code = action->code;
        request.on_paired = [folder = folder_, host, port](const std::string& new_token) {
          (void)save_pairing(folder, StationPairing{host, port, new_token, utc_now()});
        };
        sync_job_ = std::make_unique<SyncJob>(host, port, std::move(request));
        station_ui_.message.clear();
        break;
      }
      case StationAction::Kind::keep:
      case StationAction::Kind::new_value:
      case StationAction::Kind::mark_missing: settle(*action); break;
      case StationAction::Kind::revoke_device: {
        auto open = open_trial_database(trial_path_);
        Status done = open ? revoke_device(open->db, action->text, observer(), "revoked on the Station screen")
                           : Status(open.problem());
        station_ui_.message = done ? "Device " + action->text + " revoked: its later bundles are refused; what it "
                                     "brought before stays, marked in the exported data"
                                   : done.problem().message;
        station_ui_.message_is_problem = !done;
        station_.reset();
        break;
      }
    }
  }

  void settle(const StationAction& a) {
    // The cell as it is now in the file (another program may have merged or
    // settled since the screen was drawn): settled only if it is still in
    // conflict and, for Keep, the kept row is still one of its rows.
    auto open = open_trial_database(trial_path_);
    if (!open) {
      station_ui_.message = open.problem().message;
      station_ui_.message_is_problem = true;
      return;
    }
    auto now = list_conflicts(open->db, open->trial);
    const std::string where = "plot " + session_->trial().layout.plots[a.cell.plot_index].label + ", " +
                              session_->trial().plan.traits[a.cell.trait_index].name;
    const ConflictCell* found = nullptr;
    if (now)
      for (const ConflictCell& c : *now)
        if (c.plot_index == a.cell.plot_index && c.trait_index == a.cell.trait_index && c.occasion == a.cell.occasion)
          found = &c;
    if (!found) {
      station_ui_.message = where + " is no longer in conflict (settled or changed meanwhile); nothing was saved";
      station_ui_.message_is_problem = true;
      station_ui_.editing.reset();
      station_.reset();
      return;
    }
    const ConflictCell& cell = *found;
    Settlement s;
    s.by = observer();
    if (a.kind == StationAction::Kind::keep) {
      const bool still = std::any_of(cell.rows.begin(), cell.rows.end(), [&](const LiveObservation& r) {
        return r.key.device_id == a.keep.device_id && r.key.sequence == a.keep.sequence;
      });
      if (!still) {
        station_ui_.message = where + ": the value you kept is no longer one of its values; nothing was saved";
        station_ui_.message_is_problem = true;
        station_.reset();
        return;
      }
      s.kind = Settlement::Kind::keep;
      s.keep = a.keep;
    } else if (a.kind == StationAction::Kind::new_value) {
      auto parsed = parse_acceptable_value(session_->trial().plan.traits[cell.trait_index], a.text);
      if (!parsed) {
        station_ui_.message = parsed.problem().message;
        station_ui_.message_is_problem = true;
        return;
      }
      s.kind = Settlement::Kind::new_value;
      s.value = parsed->text;
      s.number = parsed->number;
    } else {
      s.kind = Settlement::Kind::missing;
      s.missing_reason = a.text;
    }
    auto key = settle_conflict(open->db, open->trial, cell, s);
    if (!key) {
      station_ui_.message = key.problem().message;
      station_ui_.message_is_problem = true;
    } else {
      station_ui_.message = "Settled plot " + session_->trial().layout.plots[cell.plot_index].label + " (saved as record " +
                            key->device_id + "/" + std::to_string(key->sequence) + " by " + s.by + ")";
      station_ui_.message_is_problem = false;
      station_ui_.editing.reset();
      (void)session_->refresh();
      map_.reset();
      analysis_.reset();
      leaving_.reset();
    }
    station_.reset();
  }

  void draw_trials(float scale, float top) {
    if (!trials_) {
      trials_.emplace();
      trials_->folder = folder_;
      trials_->trials = list_trials(folder_);
      if (!trial_path_.empty() && std::none_of(trials_->trials.begin(), trials_->trials.end(),
                                               [&](const TrialSummary& s) { return s.path == trial_path_; }))
        trials_->trials.insert(trials_->trials.begin(), summarise_trial(trial_path_));
      trials_->plan_files = list_plan_files(folder_);
      trials_->demo_available = !options_.demo_db.empty() && std::filesystem::exists(options_.demo_db);
    }
    trials_->current = trial_path_;
    const auto action = draw_trials_screen(*trials_, theme_, scale, top, &trials_ui_);
    if (!action) return;
    trials_ui_.question.reset();
    const auto say = [&](const std::string& words, bool problem) {
      trials_ui_.message = words;
      trials_ui_.message_is_problem = problem;
    };
    std::string path = action->path;
    switch (action->kind) {
      case TrialsAction::Kind::cancel: return;
      case TrialsAction::Kind::remove: {
        const std::string name = std::filesystem::path(path).filename().string();
        const bool here = std::filesystem::path(path).parent_path() == std::filesystem::path(folder_);
        if (!action->confirmed) {
          TrialsAction yes = *action;
          yes.confirmed = true;
          trials_ui_.question = TrialsQuestion{
              here ? "Move " + name + " to the trash folder? Nothing is deleted: it can be moved back from " +
                         folder_ + "/trash."
                   : "Remove " + name + " from this list? The file stays where it is (" + path + ").",
              {{here ? "Move to trash" : "Remove from the list", yes}, {"Keep it", {TrialsAction::Kind::cancel, {}}}}};
          return;
        }
        if (path == trial_path_) close_trial();   // the file must not be open while it moves
        auto moved = remove_trial(folder_, path);
        if (!moved) say(moved.problem().message, true);
        else say(here ? name + " moved to " + *moved : name + " removed from the list", false);
        trials_.reset();
        return;
      }
      case TrialsAction::Kind::open_demo: path = options_.demo_db; break;
      case TrialsAction::Kind::copy_for_device: {
        const std::string db = trial_path_for_plan(path, folder_);
        // Enrolled by whoever is recording on this device (the station keeps the name with the device's key).
        if (auto c = copy_trial_for_device(path, db, DeviceEnrolment{"", observer()}); !c) {
          say(path + ": " + c.problem().message, true);
          return;
        }
        say("Created " + db + ": this device's copy of the station's trial", false);
        path = db;
        break;
      }
      case TrialsAction::Kind::create_from_plan: {
        if (std::filesystem::path(path).extension() == ".furrow") {
          // A trial file typed in: a device's copy (or a trial known here) opens
          // as it is; a station's file asks whether to copy it or open it.
          const TrialSummary s = summarise_trial(path);
          if (!s.problem.empty()) {
            say(path + ": " + s.problem, true);
            return;
          }
          auto open = open_trial_database(path);
          const bool station = open && open->trial.role == "station";
          const auto copy = std::find_if(trials_->trials.begin(), trials_->trials.end(), [&](const TrialSummary& t) {
            return t.uid == s.uid && t.path != path;
          });
          if (station && !action->confirmed && copy != trials_->trials.end()) {
            TrialsAction again{TrialsAction::Kind::copy_for_device, path, true};
            trials_ui_.question = TrialsQuestion{
                "This device already has a copy of that station's trial (" + copy->file_name +
                    "). Open it, or make another copy (a second device identity on this tablet)?",
                {{"Open " + copy->file_name, {TrialsAction::Kind::open, copy->path}},
                 {"Make another copy", again},
                 {"Cancel", {TrialsAction::Kind::cancel, {}}}}};
            return;
          }
          if (station && !action->confirmed) {
            TrialsAction open_it{TrialsAction::Kind::open, path, true};
            trials_ui_.question = TrialsQuestion{
                path + " is a station's trial file. Record on this device's own copy of it (a new device identity, "
                       "its bundles go to the station), or open the station's file itself?",
                {{"Make this device's copy", {TrialsAction::Kind::copy_for_device, path}},
                 {"Open the station's file", open_it},
                 {"Cancel", {TrialsAction::Kind::cancel, {}}}}};
            return;
          }
          break;   // open it
        }
        const auto same = trials_named_like_plan(trials_->trials, path);
        if (!same.empty() && !action->confirmed) {
          TrialsAction again = *action;
          again.confirmed = true;
          trials_ui_.question = TrialsQuestion{
              "A trial named \"" + same.front().name + "\" is already on this device (" + same.front().file_name +
                  "). Create another trial from the same plan (a new trial with its own identity; the layout comes "
                  "from the plan), or open the one you have?",
              {{"Open " + same.front().file_name, {TrialsAction::Kind::open, same.front().path}},
               {"Create another", again},
               {"Cancel", {TrialsAction::Kind::cancel, {}}}}};
          return;
        }
        const std::string db = trial_path_for_plan(path, folder_);
        auto made = create_trial_from_plan(path, db);
        if (!made) {
          say(made.problem().message, true);
          return;
        }
        say("Created " + db + ": " + *made, false);
        path = db;
        break;
      }
      case TrialsAction::Kind::open: break;
    }
    if (auto s = open_trial(path); !s) {
      say(s.problem().message, true);
      trials_.reset();
      return;
    }
    if (action->kind == TrialsAction::Kind::open) trials_ui_.message.clear();
    trials_.reset();
    screen_ = Screen::record;
  }

  void close_trial() {
    session_.reset();
    trial_path_.clear();
    map_.reset();
    analysis_.reset();
    leaving_.reset();
    station_.reset();
    every_trait_.reset();
  }

  const BeforeLeaving& before_leaving() {
    if (!leaving_ || leaving_revision_ != session_->revision()) {
      leaving_ = session_->before_leaving(settings_.alpha);
      leaving_revision_ = session_->revision();
    }
    return *leaving_;
  }

  std::string trait_title() const {
    const Trait& tr = session_->trial().plan.traits[session_->trait_index()];
    std::string s = tr.name + (tr.unit.empty() ? "" : " (" + tr.unit + ")");
    if (tr.occasions > 1) s += ", occasion " + std::to_string(session_->occasion());
    return s;
  }

  // The analysis of the session's trait and occasion, kept until they or the log change.
  const Result<Analysis>& analysis() {
    const Key key{session_->trait_index(), session_->occasion(), session_->revision(), 0,
                  check_ui_.without_interaction};
    if (!analysis_ || !(analysis_key_ == key)) {
      AnalysisOptions options;
      options.alpha = settings_.alpha;
      options.without_interaction = check_ui_.without_interaction;
      analysis_.emplace(analyse_trial_trait(session_->trial(), session_->live(), key.trait, key.occasion, options));
      analysis_key_ = key;
    }
    return *analysis_;
  }

  // The same trait by REML, with a field-trend test at a one-site trial.
  // Computed with the analysis for trials up to kAutoRemlPlots plots (about
  // fraction of a second); above that only when asked on the Check screen,
  // once for the data as they stand (a new value asks again).
  static constexpr size_t kAutoRemlPlots = 300;
  bool reml_automatic() const { return session_->trial().layout.plots.size() <= kAutoRemlPlots; }
  const Result<MixedAnalysis>* reml() {
    const Key key{session_->trait_index(), session_->occasion(), session_->revision(), 0,
                  check_ui_.without_interaction};
    const bool fresh = reml_ && reml_key_ == key;
    if (!fresh && (reml_automatic() || check_ui_.reml_requested)) {
      AnalysisOptions options;
      options.alpha = settings_.alpha;
      options.without_interaction = check_ui_.without_interaction;
      reml_.emplace(reml_trial_trait(session_->trial(), session_->live(), key.trait, key.occasion, options,
                                     FieldTrendChoice::test));
      reml_key_ = key;
      check_ui_.reml_requested = false;
    }
    return reml_ && reml_key_ == key ? &*reml_ : nullptr;
  }

  void step_trait(int delta) {
    const size_t n = session_->trial().plan.traits.size();
    session_->set_trait((session_->trait_index() + n + delta) % n);
  }

  void draw_map(float scale, float top) {
    const Key key{session_->trait_index(), session_->occasion(), session_->revision(),
                  static_cast<int>(map_ui_.colouring)};
    if (!map_ || !(map_key_ == key)) {
      const Result<Analysis>* a = map_ui_.colouring == MapColouring::residual ? &analysis() : nullptr;
      const Result<MixedAnalysis>* r = map_ui_.colouring == MapColouring::trend ? reml() : nullptr;
      // The status map marks what Before leaving would ask about this trait
      // and occasion on every plot, whatever today's walk is.
      map_ = build_field_map(session_->trial(), session_->live(), key.trait, key.occasion, map_ui_.colouring, theme_,
                             map_ui_.colouring == MapColouring::status ? &trait_list() : nullptr,
                             a && *a ? &**a : nullptr, r && *r ? &**r : nullptr);
      map_key_ = key;
      labels_.clear();
      for (const PlannedPlot& p : session_->trial().layout.plots) labels_.push_back(p.label);
    }
    const auto action = draw_map_screen(*map_, labels_, trait_title(), theme_, scale, top, &map_ui_);
    if (!action) return;
    switch (action->kind) {
      case MapAction::Kind::open_plot:
        open_plot(action->plot_index, session_->trait_index(), session_->occasion());
        break;
      case MapAction::Kind::next_trait: step_trait(1); break;
      case MapAction::Kind::previous_trait: step_trait(-1); break;
      case MapAction::Kind::colouring_changed: map_.reset(); break;
    }
  }

  void draw_check(float scale, float top) {
    const Result<Analysis>& a = analysis();
    if (check_ui_.every_trait_outliers && (!every_trait_ || every_trait_revision_ != session_->revision())) {
      // Every trait's outlier plots on every plot, whatever today's walk.
      const StoredTrial& t = session_->trial();
      WalkChoice all;
      for (const Trait& tr : t.plan.traits) all.trait_codes.push_back(tr.code);
      every_trait_.emplace();
      for (int occ = 1;; ++occ) {
        bool any = false;
        for (const Trait& tr : t.plan.traits) any = any || tr.occasions >= occ;
        if (!any) break;
        all.occasion = occ;
        const BeforeLeaving b = furrow::before_leaving(t, session_->live(), settings_.alpha, Walk(t, all));
        for (const LeavingItem& item : b.items)
          if (item.has(LeavingItem::Kind::outlier) && item.occasion == occ)
            every_trait_->push_back({item.plot_index, item.trait_index, item.occasion, item.message});
      }
      every_trait_revision_ = session_->revision();
    }
    static const std::vector<EveryTraitOutlier> kNone;
    // Blind scoring hides treatment names while collecting: the analysis by
    // treatment would name them, so it waits until blind scoring is off.
    if (settings_.blind_scoring) {
      const auto blind = draw_check_screen(session_->trial(), nullptr,
                                           "blind scoring is on, and the analysis would name the treatments; turn it "
                                           "off in Settings to see it",
                                           trait_title(), session_->trial().plan.traits[session_->trait_index()].unit,
                                           kNone, theme_, scale, top, &check_ui_);
      if (blind && blind->kind == CheckAction::Kind::next_trait) step_trait(1);
      if (blind && blind->kind == CheckAction::Kind::previous_trait) step_trait(-1);
      return;
    }
    const Result<MixedAnalysis>* r = a ? reml() : nullptr;
    RemlView rv;
    rv.analysis = r && *r ? &**r : nullptr;
    rv.problem = r && !*r ? r->problem().message : "";
    rv.on_request = r == nullptr;
    const auto action = draw_check_screen(session_->trial(), a ? &*a : nullptr, a ? "" : a.problem().message,
                                          trait_title(), session_->trial().plan.traits[session_->trait_index()].unit,
                                          every_trait_ ? *every_trait_ : kNone, theme_, scale, top, &check_ui_, rv);
    if (!action) return;
    switch (action->kind) {
      case CheckAction::Kind::open_plot:
        open_plot(action->plot_index, session_->trait_index(), session_->occasion());
        break;
      case CheckAction::Kind::open_plot_trait:
        open_plot(action->plot_index, action->trait_index, action->occasion);
        break;
      case CheckAction::Kind::next_trait: step_trait(1); break;
      case CheckAction::Kind::previous_trait: step_trait(-1); break;
    }
  }

  void open_plot(size_t plot_index, size_t trait_index, int occasion) {
    session_->set_trait(trait_index);
    (void)session_->set_occasion(occasion);
    (void)session_->jump_to(session_->trial().layout.plots[plot_index].label);
    screen_ = Screen::record;
  }

  struct Key {
    size_t trait = 0;
    int occasion = 0;
    std::uint64_t revision = 0;
    int colouring = 0;                 // the map's colouring
    bool without_interaction = false;  // the analysis: main effects only
    bool operator==(const Key&) const = default;
  };

  const FieldAppOptions& options_;
  Settings settings_;
  std::string settings_path_, folder_;
  Theme theme_;
  Screen screen_ = Screen::record;
  std::optional<RecordSession> session_;
  std::string trial_path_;
  float nav_height_ = 0;
  bool nav_menu_open_ = false;   // large text: the list of screens is open
  std::vector<TapTarget> nav_targets_;
  RecordScreenState record_ui_;
  SettingsScreenState settings_ui_;
  LeavingScreenState leaving_ui_;
  MapScreenState map_ui_;
  CheckScreenState check_ui_;
  TrialsScreenState trials_ui_;
  std::optional<TrialsView> trials_;
  StationScreenState station_ui_;
  std::optional<StationView> station_;
  std::optional<StationImport> import_;
  bool import_reported_ = false;
  std::optional<BeforeLeaving> leaving_;
  std::uint64_t leaving_revision_ = 0;
  std::optional<FieldMap> map_;
  Key map_key_;
  std::vector<std::string> labels_;
  std::optional<Result<Analysis>> analysis_;
  std::optional<Result<MixedAnalysis>> reml_;
  Key reml_key_;
  Key analysis_key_;
  std::vector<TapTarget> help_targets_;
  std::optional<BeforeLeaving> question_list_;
  Key question_key_;
  std::optional<std::vector<EveryTraitOutlier>> every_trait_;
  std::uint64_t every_trait_revision_ = 0;
  double last_fresh_check_ = -1;
  // Sync over the network: this app serving as the station, or syncing as a device.
  std::unique_ptr<SyncServer> server_;
  std::unique_ptr<SyncJob> sync_job_;
  double last_day_read_ = -1;
};

}  // namespace

FieldAppState::~FieldAppState() = default;

std::unique_ptr<FieldAppState> FieldAppState::create(const FieldAppOptions& options, Settings settings,
                                                     std::string settings_path, std::string folder) {
  return std::make_unique<FieldApp>(options, std::move(settings), std::move(settings_path), std::move(folder));
}

Screen screen_named(const std::string& name) {
  for (const auto& [key, s] : {std::pair{"trials", Screen::trials}, {"record", Screen::record}, {"map", Screen::map},
                               {"check", Screen::check}, {"leaving", Screen::leaving}, {"station", Screen::station},
                               {"settings", Screen::settings},
                               {"help", Screen::help}})
    if (name == key) return s;
  return Screen::record;
}

}  // namespace furrow
