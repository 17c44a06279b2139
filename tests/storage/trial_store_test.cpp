// The trial database: schema rules, the append-only log and its views.

#include "storage/enrolment.h"
#include "storage/trial_store.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>

#include "storage/plan_file.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

NewObservation value_for(const StoredTrial& t, size_t plot, size_t trait, const std::string& v) {
  NewObservation o;
  o.plot_id = t.plot_ids[plot];
  o.trait_id = t.trait_ids[trait];
  o.value = v;
  o.number = std::stod(v);
  o.observer = "Ana";
  return o;
}

TEST_CASE("a created trial reads back with its plan, layout and a device identity") {
  auto open = open_trial_database(test::fresh_demo_trial("readback.furrow"));
  REQUIRE(open.ok());
  const StoredTrial& t = open->trial;
  CHECK(t.plan.name == "Harrow Ridge hulless oat variety trial 2026");
  CHECK(t.layout.plots.size() == 80);
  CHECK(t.plan.traits.size() == 5);
  CHECK(t.plan.traits[3].scale_max == 9);
  CHECK(t.device_id.size() == 16);
  CHECK(t.layout.plots.front().walk_order == 1);
  CHECK(t.layout.plots.front().label == "101");
}

TEST_CASE("appends get consecutive sequence numbers; an edit replaces, the log keeps both") {
  auto open = open_trial_database(test::fresh_demo_trial("edit.furrow"));
  REQUIRE(open.ok());
  auto& [db, t] = *open;
  const auto k1 = append_observation(db, t.device_id, value_for(t, 0, 1, "95"), utc_now());
  REQUIRE(k1.ok());
  CHECK(k1->sequence == 1);
  NewObservation edit = value_for(t, 0, 1, "96");
  edit.replaces = {*k1};
  const auto k2 = append_observation(db, t.device_id, edit, utc_now());
  REQUIRE(k2.ok());
  CHECK(k2->sequence == 2);
  const auto live = live_observations(db, t.trait_ids[1]);
  REQUIRE(live.ok());
  REQUIRE(live->size() == 1);
  CHECK(*live->front().value == "96");
  const auto all = all_observations(db);
  CHECK(all->size() == 2);
}

TEST_CASE("the log refuses UPDATE and DELETE; STRICT tables refuse wrong types") {
  auto open = open_trial_database(test::fresh_demo_trial("strict.furrow"));
  REQUIRE(open.ok());
  auto& [db, t] = *open;
  REQUIRE(append_observation(db, t.device_id, value_for(t, 0, 1, "95"), utc_now()).ok());
  CHECK_FALSE(db.exec("UPDATE observation SET value = '1'").ok());
  CHECK_FALSE(db.exec("DELETE FROM observation").ok());
  CHECK_FALSE(db.exec("INSERT INTO plot (trial_id, label, block, field_row, field_column, walk_order) "
                      "VALUES (1, 'x', 'one', 1, 1, 1)").ok());
  CHECK(all_observations(db)->size() == 1);
}

TEST_CASE("two devices with different live values for one cell are a conflict until settled") {
  auto open = open_trial_database(test::fresh_demo_trial("conflict.furrow"));
  REQUIRE(open.ok());
  auto& [db, t] = *open;
  const auto a = append_observation(db, t.device_id, value_for(t, 3, 4, "5.10"), utc_now());
  const auto b = append_observation(db, "00000000000000b2", value_for(t, 3, 4, "5.70"), utc_now());
  REQUIRE((a.ok() && b.ok()));
  auto count = [&](const char* sql) {
    auto s = db.prepare(sql);
    REQUIRE(s.ok());
    s->step();
    return s->integer(0);
  };
  CHECK(count("SELECT count(*) FROM conflict") == 1);
  CHECK(count("SELECT count(*) FROM current_value") == 0);
  NewObservation settle = value_for(t, 3, 4, "5.70");
  settle.replaces = {*a, *b};
  REQUIRE(append_observation(db, t.device_id, settle, utc_now()).ok());
  CHECK(count("SELECT count(*) FROM conflict") == 0);
  CHECK(count("SELECT count(*) FROM current_value") == 1);
  // Two devices agreeing is not a conflict.
  REQUIRE(append_observation(db, t.device_id, value_for(t, 5, 4, "6.00"), utc_now()).ok());
  REQUIRE(append_observation(db, "00000000000000b2", value_for(t, 5, 4, "6.00"), utc_now()).ok());
  CHECK(count("SELECT count(*) FROM conflict") == 0);
}

TEST_CASE("a database from a newer schema is refused, not changed") {
  const std::string path = test::fresh_demo_trial("newer.furrow");
  {
    auto db = Database::open(path, false);
    REQUIRE(db.ok());
    REQUIRE(db->exec("PRAGMA user_version = 99").ok());
  }
  const auto open = open_trial_database(path);
  REQUIRE_FALSE(open.ok());
  CHECK(open.problem().message.find("newer Furrow") != std::string::npos);
}

TEST_CASE("a schema-1 database migrates to schema 2: log kept, a trial identity added, role station") {
  const std::string path = test::fresh_demo_trial("schema1.furrow");
  std::string uid_before;
  {
    auto open = open_trial_database(path);
    REQUIRE(open.ok());
    uid_before = open->trial.uid;
    REQUIRE(append_observation(open->db, open->trial.device_id, value_for(open->trial, 0, 1, "95"), utc_now()).ok());
  }
  // Take the file back to schema 1 as it was written before bundles existed:
  // the trial table without uid and role, no station_holding or merged_bundle.
  {
    auto db = Database::open(path, false);
    REQUIRE(db.ok());
    REQUIRE(db->exec(R"sql(
      PRAGMA foreign_keys = OFF;
      PRAGMA legacy_alter_table = ON;
      BEGIN;
      ALTER TABLE trial RENAME TO trial_v2;
      CREATE TABLE trial (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL, site TEXT NOT NULL, season TEXT NOT NULL,
        design TEXT NOT NULL, replicates INTEGER NOT NULL,
        grid_rows INTEGER NOT NULL, grid_columns INTEGER NOT NULL,
        plot_length_m REAL NOT NULL, plot_width_m REAL NOT NULL,
        block_shape TEXT NOT NULL, block_rows INTEGER NOT NULL, block_columns INTEGER NOT NULL,
        walk TEXT NOT NULL, seed TEXT NOT NULL,
        sites TEXT NOT NULL,
        status TEXT NOT NULL CHECK (status IN ('planning', 'collecting', 'closed')),
        created_at TEXT NOT NULL, closed_at TEXT
      ) STRICT;
      INSERT INTO trial SELECT id, name, site, season, design, replicates, grid_rows, grid_columns, plot_length_m,
        plot_width_m, block_shape, block_rows, block_columns, walk, seed, sites, status, created_at, closed_at
        FROM trial_v2;
      DROP TABLE trial_v2;
      DROP TABLE station_holding;
      DROP TABLE merged_bundle;
      DROP TABLE walk_choice;
      DROP TABLE signing_key;
      DROP TABLE enrolment;
      ALTER TABLE observation DROP COLUMN confirmed_checks;
      PRAGMA user_version = 1;
      COMMIT;
    )sql").ok());
  }
  auto open = open_trial_database(path);
  REQUIRE(open.ok());
  CHECK(open->trial.uid.size() == 32);
  CHECK(open->trial.uid != uid_before);   // schema 1 had none: the migration gave it a new one
  CHECK(open->trial.role == "station");
  CHECK(open->trial.plan.name == "Harrow Ridge hulless oat variety trial 2026");
  auto live = live_observations(open->db, 0);
  REQUIRE(live.ok());
  REQUIRE(live->size() == 1);
  CHECK(*live->front().value == "95");
  auto version = open->db.prepare("PRAGMA user_version");
  REQUIRE(version.ok());
  REQUIRE(version->step());
  CHECK(version->integer(0) == kSchemaVersion);
  // Schema 5: the file was given its own key, enrolled as its station's.
  auto key = own_key(open->db);
  REQUIRE(key.ok());
  auto self = enrolment_by_key(open->db, key->public_key);
  REQUIRE(self.ok());
  REQUIRE(self->has_value());
  CHECK((*self)->role == "station");
  CHECK((*self)->device_id == open->trial.device_id);
  auto fk = open->db.prepare("PRAGMA foreign_key_check");
  REQUIRE(fk.ok());
  CHECK_FALSE(fk->step());   // no dangling references
}

TEST_CASE("exports: layout in walking order, wide table marks conflicts") {
  auto open = open_trial_database(test::fresh_demo_trial("export.furrow"));
  REQUIRE(open.ok());
  auto& [db, t] = *open;
  const std::string layout = layout_csv(t);
  CHECK(layout.rfind("label,site,block,field_row,field_column,walk_order,entry\n101,,1,1,1,1,", 0) == 0);
  REQUIRE(append_observation(db, t.device_id, value_for(t, 0, 1, "95"), utc_now()).ok());
  REQUIRE(append_observation(db, "00000000000000b2", value_for(t, 0, 1, "97"), utc_now()).ok());
  const auto live = live_observations(db, 0);
  const std::string wide = wide_data_csv(t, *live);
  CHECK(wide.find("\n101,,1,1,1,Quillon,,,,CONFLICT,") != std::string::npos);
  const std::string long_table = long_data_csv(t, *live);
  CHECK(std::count(long_table.begin(), long_table.end(), '\n') == 3);
}

}  // namespace
}  // namespace furrow
