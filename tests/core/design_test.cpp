#include "core/design.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("design keys round-trip") {
  for (const char* k : {"crd", "rcbd", "latin", "factorial", "split-plot", "multi-site"}) {
    const auto kind = parse_design_kind(k);
    REQUIRE(kind.has_value());
    CHECK(std::string(design_kind_key(*kind)) == k);
  }
  CHECK_FALSE(parse_design_kind("RCBD").has_value());
}

TEST_CASE("split-plot: blocks and main plots are tested against block x main plot (ARCHITECTURE.md table)") {
  DesignRoles r;
  r.kind = DesignKind::split_plot;
  r.block = "rep";
  r.main_plot = "tillage";
  r.sub_plot = "rate";
  const auto m = build_design_model(r);
  REQUIRE(m.ok());
  REQUIRE(m->terms.size() == 5);
  CHECK(m->terms[0].label == "rep");
  CHECK(m->terms[2].label == "rep x tillage");
  CHECK(m->terms[2].role == TermRole::error);
  CHECK(m->terms[1].error_term == 2);
  CHECK(m->terms[3].error_term == -1);
  CHECK(m->terms[4].label == "tillage x rate");
}

TEST_CASE("several sites: treatments tested against site x treatment only when sites are random") {
  DesignRoles r;
  r.kind = DesignKind::multi_site;
  r.site = "site";
  r.block = "rep";
  r.treatments = {"entry"};
  auto fixed = build_design_model(r);
  REQUIRE(fixed.ok());
  CHECK(fixed->terms[1].label == "rep within site");
  CHECK(fixed->terms[2].error_term == -1);
  r.sites_random = true;
  auto random = build_design_model(r);
  CHECK(random->terms[2].error_term == 3);
  CHECK(random->terms[0].error_term == 1);   // sites against blocks within sites
}

TEST_CASE("factorial with three factors has every interaction") {
  DesignRoles r;
  r.kind = DesignKind::factorial;
  r.treatments = {"a", "b", "c"};
  const auto m = build_design_model(r);
  REQUIRE(m.ok());
  CHECK(m->terms.size() == 7);
  CHECK(m->terms.back().label == "a x b x c");
}

TEST_CASE("roles that do not fit the design are refused in plain words") {
  DesignRoles r;
  r.kind = DesignKind::randomised_complete_block;
  r.treatments = {"entry"};
  auto m = build_design_model(r);
  REQUIRE_FALSE(m.ok());
  CHECK(m.problem().message.find("block column") != std::string::npos);
  r.block = "entry";
  m = build_design_model(r);
  REQUIRE_FALSE(m.ok());
  CHECK(m.problem().message.find("two roles") != std::string::npos);
  r.kind = DesignKind::factorial;
  r.block = "";
  m = build_design_model(r);
  CHECK_FALSE(m.ok());   // one treatment column only
}

}  // namespace
}  // namespace furrow
