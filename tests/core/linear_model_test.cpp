// The fitting methods agree with each other and with the classic missing-plot
// result for randomised complete blocks.

#include "core/linear_model.h"

#include <doctest/doctest.h>

#include "core/analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

using test::clewer;
using test::rcbd_roles;

TEST_CASE("one missing plot: least squares equals Yates's missing-plot estimate (Yates 1933, Empire J. "
          "Exp. Agric. 1, 129-142): same residual SS, one error DF fewer") {
  PlotTable t = clewer();
  const DataColumn& block = *t.find("block");
  const DataColumn& gen = *t.find("gen");
  DataColumn& y = t.columns[4];
  REQUIRE(y.name == "yield");
  const int missing = 0;   // the first plot: B1, V2
  const std::string mb = block.cells[missing], mg = gen.cells[missing];
  y.cells[missing] = "";
  double block_total = 0, gen_total = 0, grand = 0;
  for (int i = 0; i < t.records(); ++i) {
    if (i == missing) continue;
    const double v = std::stod(y.cells[i]);
    grand += v;
    if (block.cells[i] == mb) block_total += v;
    if (gen.cells[i] == mg) gen_total += v;
  }
  const double r = 3, k = 4;
  const double x = (r * block_total + k * gen_total - grand) / ((r - 1) * (k - 1));
  for (FitMethod m : {FitMethod::automatic, FitMethod::dense}) {
    AnalysisOptions o;
    o.method = m;
    const auto with_missing = analyse(t, rcbd_roles(), "yield", o);
    REQUIRE(with_missing.ok());
    PlotTable filled = t;
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.15g", x);
    filled.columns[4].cells[missing] = buf;
    const auto with_estimate = analyse(filled, rcbd_roles(), "yield", o);
    REQUIRE(with_estimate.ok());
    CHECK(test::row(*with_missing, "residual").df == 5);
    CHECK(test::row(*with_missing, "residual").ss ==
          doctest::Approx(test::row(*with_estimate, "residual").ss).epsilon(1e-12));
    // The adjusted mean of the treatment with the missing plot equals its mean
    // with the estimate inserted.
    for (const MeanRow& row : with_missing->means[0].levels)
      if (row.label == mg) {
        double total = gen_total + x;
        CHECK(row.mean == doctest::Approx(total / 3).epsilon(1e-12));
      }
  }
}

TEST_CASE("absorbed and dense methods give the same sums, means and standard errors on unbalanced blocks") {
  PlotTable t = clewer();
  t.columns[4].cells[0] = "";
  t.columns[4].cells[7] = "NA";
  AnalysisOptions dense, absorbed;
  dense.method = FitMethod::dense;
  absorbed.method = FitMethod::absorbed;
  for (SumsKind s : {SumsKind::sequential, SumsKind::partial}) {
    dense.sums = absorbed.sums = s;
    const auto a = analyse(t, rcbd_roles(), "yield", dense);
    const auto b = analyse(t, rcbd_roles(), "yield", absorbed);
    REQUIRE(a.ok());
    REQUIRE(b.ok());
    CHECK(b->method == FitMethod::absorbed);
    for (size_t i = 0; i < a->table.size(); ++i) {
      CHECK(a->table[i].df == b->table[i].df);
      CHECK(a->table[i].ss == doctest::Approx(b->table[i].ss).epsilon(1e-12));
    }
    for (size_t i = 0; i < a->means[0].levels.size(); ++i) {
      CHECK(a->means[0].levels[i].mean == doctest::Approx(b->means[0].levels[i].mean).epsilon(1e-12));
      CHECK(a->means[0].levels[i].se == doctest::Approx(b->means[0].levels[i].se).epsilon(1e-10));
    }
    for (size_t i = 0; i < a->means[0].pairs.size(); ++i)
      CHECK(a->means[0].pairs[i].se == doctest::Approx(b->means[0].pairs[i].se).epsilon(1e-10));
  }
}

TEST_CASE("a forced method that does not apply is refused") {
  CodedDesign d;
  d.n = 4;
  d.factors = {{{0, 0, 1, 1}, 2}, {{0, 1, 0, 1}, 2}};
  d.terms = {{0}, {1}, {0, 1}};
  CHECK_FALSE(LinearModel::build(d, FitMethod::absorbed).ok());
}

TEST_CASE("a design with no error degrees of freedom is refused, not fitted") {
  CodedDesign d;
  d.n = 4;
  d.factors = {{{0, 0, 1, 1}, 2}, {{0, 1, 0, 1}, 2}};
  d.terms = {{0}, {1}, {0, 1}};
  const auto m = LinearModel::build(d);
  REQUIRE_FALSE(m.ok());
  CHECK(m.problem().message.find("no degrees of freedom for error") != std::string::npos);
}

}  // namespace
}  // namespace furrow
