// The REML engine against an independent maximisation: for each unbalanced
// design made by make_reml_cases.py (a split-plot with a whole main plot
// missing, several sites with an entry absent at one site, randomised blocks
// with random entries, a field trend with AR1 x AR1 correlation), numpy
// evaluates the REML log-likelihood densely from its definition (Harville
// 1977) and scipy maximises it from several starts. Required: parameters to
// 1e-5 relative, the maximum to 1e-8. statsmodels' MixedLM (REML) is a
// second reference where it converged; where it did not, that is reported.

#include <doctest/doctest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "core/reml.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

MixedModelSpec spec_of(const nlohmann::json& c) {
  MixedModelSpec spec;
  spec.n = static_cast<int>(c["y"].size());
  for (const auto& f : c["factors"]) {
    CodedFactor cf;
    cf.codes = f["codes"].get<std::vector<int>>();
    cf.levels = f["levels"].get<int>();
    spec.factors.push_back(cf);
  }
  for (const auto& t : c["fixed"]) spec.fixed.push_back({"fixed", t.get<std::vector<int>>()});
  int k = 0;
  for (const auto& t : c["random"]) spec.random.push_back({"random " + std::to_string(k++), t.get<std::vector<int>>()});
  if (!c["spatial"].is_null()) {
    SpatialField f;
    f.rows = c["spatial"]["rows"].get<int>();
    f.cols = c["spatial"]["cols"].get<int>();
    f.row = c["spatial"]["row"].get<std::vector<int>>();
    f.col = c["spatial"]["col"].get<std::vector<int>>();
    spec.spatial = f;
  }
  return spec;
}

TEST_SUITE("reml") {
  TEST_CASE("REML estimates are the maximum found independently by numpy and scipy") {
    const auto cases = nlohmann::json::parse(test::read_text(test::generated_path("reml_cases.json")));
    REQUIRE(cases.size() >= 4);
    for (const auto& c : cases) {
      const std::string name = c["name"].get<std::string>();
      INFO(name);
      const MixedModelSpec spec = spec_of(c);
      const auto fit = fit_reml(spec, c["y"].get<std::vector<double>>());
      REQUIRE_MESSAGE(fit.ok(), (fit.ok() ? "" : fit.problem().message));
      CHECK(fit->converged());
      const auto expected = c["params"].get<std::vector<double>>();
      REQUIRE(fit->parameters().size() == expected.size());
      for (size_t i = 0; i < expected.size(); ++i) {
        INFO(fit->parameters()[i].label << " " << fit->parameters()[i].value << " vs " << expected[i]);
        CHECK(std::abs(fit->parameters()[i].value - expected[i]) <= 1e-5 * std::abs(expected[i]));
      }
      const double ll = c["loglik"].get<double>();
      INFO("log-likelihood " << fit->log_likelihood() << " vs " << ll);
      CHECK(std::abs(fit->log_likelihood() - ll) <= 1e-8 * std::max(1.0, std::abs(ll)));
      // The engine's maximum is at least the independent one (up to rounding).
      CHECK(fit->log_likelihood() >= ll - 1e-9 * std::abs(ll));
      MESSAGE(name << ": " << fit->iterations() << " iterations, log-likelihood " << fit->log_likelihood());
      if (c.contains("statsmodels")) {
        const auto& sm = c["statsmodels"];
        if (sm["converged"].get<bool>()) {
          const auto p = sm["params"].get<std::vector<double>>();
          for (size_t i = 0; i < p.size(); ++i) {
            INFO("statsmodels " << fit->parameters()[i].label << " " << p[i]);
            CHECK(std::abs(fit->parameters()[i].value - p[i]) <= 1e-4 * std::abs(p[i]));
          }
        } else {
          MESSAGE(name << ": statsmodels MixedLM did not converge (" << sm["messages"].dump() << "); not compared");
        }
      }
    }
  }
}

}  // namespace
}  // namespace furrow
