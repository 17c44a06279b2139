#include "core/entry_checks.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <random>

namespace furrow {
namespace {

Trait height() {
  Trait t;
  t.code = "HT";
  t.name = "plant height";
  t.unit = "cm";
  t.kind = TraitKind::decimal;
  t.decimals = 0;
  t.hard_min = 0;
  t.hard_max = 300;
  t.soft_min = 40;
  t.soft_max = 160;
  return t;
}

bool has(const std::vector<Finding>& f, const std::string& check, Severity s) {
  for (const Finding& x : f)
    if (x.check == check && x.severity == s) return true;
  return false;
}

TEST_CASE("hard limits refuse, soft limits ask for confirmation") {
  EntryContext c;
  CHECK(has(check_entry(height(), "350", c), "hard_limit", Severity::refuse));
  CHECK(has(check_entry(height(), "170", c), "soft_limit", Severity::confirm));
  CHECK(check_entry(height(), "95", c).empty());
}

TEST_CASE("more decimals than the trait is measured to, text in a number, scores and categories") {
  EntryContext c;
  const auto f = check_entry(height(), "95.5", c);
  REQUIRE(f.size() == 1);
  CHECK(f[0].severity == Severity::refuse);
  CHECK(f[0].message.find("recorded to 0 decimals") != std::string::npos);
  CHECK(worst(check_entry(height(), "9o", c)) == Severity::refuse);
  Trait score;
  score.name = "lodging";
  score.kind = TraitKind::score;
  score.scale_min = 1;
  score.scale_max = 9;
  CHECK(worst(check_entry(score, "0", c)) == Severity::refuse);
  CHECK(worst(check_entry(score, "4.5", c)) == Severity::refuse);
  CHECK(check_entry(score, "7", c).empty());
  Trait cat;
  cat.name = "awn type";
  cat.kind = TraitKind::category;
  cat.categories = {"awned", "awnless"};
  CHECK(worst(check_entry(cat, "hooded", c)) == Severity::refuse);
  CHECK(check_entry(cat, "awnless", c).empty());
  Trait date;
  date.name = "heading date";
  date.kind = TraitKind::date;
  CHECK(worst(check_entry(date, "2026-02-30", c)) == Severity::refuse);
  CHECK(check_entry(date, "2024-02-29", c).empty());
  CHECK(*parse_trait_value(date, "1970-01-02")->number == 1.0);
}

TEST_CASE("a decimal slip is caught once there are enough plots (FIELD-PRACTICE.md: 45.6 typed 456)") {
  Trait t = height();
  t.soft_min.reset();
  t.soft_max.reset();
  t.hard_max = 2000;
  EntryContext c;
  c.other_values = {44.1, 46.0, 45.2, 47.3, 43.8, 45.9, 44.7, 46.4, 45.0};
  t.decimals = 1;
  const auto f = check_entry(t, "456", c);
  REQUIRE(has(f, "decimal_slip", Severity::confirm));
  CHECK(f[0].message.find("Did you mean 45.6") != std::string::npos);
  CHECK_FALSE(has(check_entry(t, "4.6", c), "decimal_slip", Severity::refuse));
  CHECK(has(check_entry(t, "4.6", c), "decimal_slip", Severity::confirm));
  CHECK(check_entry(t, "46.1", c).empty());
  c.other_values.resize(kMinValuesForSlip - 1);
  CHECK(check_entry(t, "456", c).empty());
}

TEST_CASE("the same value several plots in a row is noted") {
  EntryContext c;
  c.previous_entries = {"90", "95", "95", "95"};
  CHECK(has(check_entry(height(), "95", c), "repeated", Severity::note));
  c.previous_entries = {"95", "90", "95"};
  CHECK(check_entry(height(), "95", c).empty());
}

TEST_CASE("unlikely for this plot given block and treatment means") {
  // 3 blocks x 6 treatments, additive, small noise.
  std::vector<double> v;
  std::vector<int> b, t;
  for (int bl = 0; bl < 3; ++bl)
    for (int tr = 0; tr < 6; ++tr) {
      v.push_back(100 + 5 * tr + 2 * bl + ((bl * 7 + tr * 3) % 5 - 2) * 0.5);
      b.push_back(bl);
      t.push_back(tr);
    }
  const auto e = expect_from_means(v, b, t, 1, 4);
  REQUIRE(e.has_value());
  CHECK(e->expected == doctest::Approx(100 + 20 + 2).epsilon(0.01));
  EntryContext c;
  c.expectation = e;
  Trait tr = height();
  tr.soft_max.reset();
  CHECK(has(check_entry(tr, "150", c), "unlikely", Severity::confirm));
  CHECK(check_entry(tr, "122", c).empty());
  CHECK_FALSE(expect_from_means({1, 2, 3}, {0, 0, 0}, {0, 1, 2}, 0, 1).has_value());   // too little data
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

// The direct computation check_entry falls back on: median and robust SD of
// the other values.
SlipStats direct_slip(const std::vector<double>& others) {
  std::vector<double> v = others;
  std::sort(v.begin(), v.end());
  const auto med = [](std::vector<double> s) {
    std::sort(s.begin(), s.end());
    const size_t n = s.size();
    return n % 2 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
  };
  const double m = med(v);
  std::vector<double> dev;
  for (double x : v) dev.push_back(std::abs(x - m));
  return {m, 1.4826 * med(dev)};
}

TEST_CASE("leave-one-out statistics equal the direct computation from the other values") {
  std::mt19937 rng(11);
  for (int trial = 0; trial < 40; ++trial) {
    // Blocks and treatments of varying sizes, values with ties (whole numbers)
    // and without, some cells empty, now and then a value alone in its treatment.
    const int blocks = 2 + static_cast<int>(rng() % 5), treatments = 3 + static_cast<int>(rng() % 20);
    std::vector<double> values;
    std::vector<int> block, treatment;
    std::normal_distribution<double> noise(0, 6);
    for (int b = 0; b < blocks; ++b)
      for (int t = 0; t < treatments; ++t) {
        if (rng() % 9 == 0) continue;
        double v = 100 + 3 * b - 2 * t + noise(rng);
        if (trial % 2) v = std::round(v);
        values.push_back(v);
        block.push_back(b);
        treatment.push_back(1000 + t);
      }
    const LeaveOneOut loo(values, block, treatment);
    for (size_t k = 0; k < values.size(); ++k) {
      std::vector<double> others;
      std::vector<int> ob, ot;
      for (size_t j = 0; j < values.size(); ++j)
        if (j != k) {
          others.push_back(values[j]);
          ob.push_back(block[j]);
          ot.push_back(treatment[j]);
        }
      const auto s = loo.slip(k);
      REQUIRE(s.has_value() == (static_cast<int>(others.size()) >= kMinValuesForSlip));
      if (s) {
        const SlipStats d = direct_slip(others);
        CHECK(s->median == d.median);   // the same values, the same arithmetic
        CHECK(s->sd == d.sd);
      }
      const auto e = loo.expectation(k);
      const auto de = expect_from_means(others, ob, ot, block[k], treatment[k]);
      REQUIRE(e.has_value() == de.has_value());
      if (e) {
        CHECK(e->expected == doctest::Approx(de->expected).epsilon(1e-10));
        CHECK(e->sd == doctest::Approx(de->sd).epsilon(1e-9));
      }
    }
  }
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("a settlement's value is parsed and checked like an entry, with no plot to compare it with") {
  Trait height;   // limits as in the demo plan (common practice for plant height in cm)
  height.code = "height_cm";
  height.name = "plant height";
  height.kind = TraitKind::decimal;
  height.decimals = 1;
  height.hard_min = 0;
  height.hard_max = 250;
  height.soft_min = 60;
  height.soft_max = 140;
  const auto ok = parse_acceptable_value(height, "98.5");
  REQUIRE(ok.ok());
  CHECK(*ok->number == doctest::Approx(98.5));
  // Outside the usual range only asks for confirmation at entry: a settler has looked already.
  CHECK(parse_acceptable_value(height, "150").ok());
  const auto past = parse_acceptable_value(height, "900");
  REQUIRE_FALSE(past.ok());
  CHECK(past.problem().message.rfind("900 refused: ", 0) == 0);
  CHECK_FALSE(parse_acceptable_value(height, "tall").ok());
  CHECK_FALSE(parse_acceptable_value(height, "98.55").ok());   // more decimals than the trait keeps
}

}  // namespace
}  // namespace furrow
