// Fuzz target for the plan reader and the value parser: any bytes must give
// a plan or a plain Problem, never a crash, a hang or undefined behaviour.
// Built with libFuzzer by -DFURROW_FUZZ=ON (clang); the test suite runs the
// seed corpus through the same entry point with fuzz_corpus_runner.

#include <cstddef>
#include <cstdint>
#include <string>

#include "core/entry_checks.h"
#include "core/exact_decimal.h"
#include "storage/plan_file.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  auto plan = furrow::parse_plan_text(text);
  if (plan.ok() && !plan->layout) {
    // Small plans are randomised too: the layout code must hold up as well.
    const long plots = static_cast<long>(plan->plan.rows) * plan->plan.columns;
    if (plots > 0 && plots <= 5000) (void)furrow::randomise(plan->plan);
  }
  // Every line as an entered value for each kind of trait.
  furrow::Trait trait;
  trait.name = "fuzz";
  trait.categories = {"a", "b"};
  size_t start = 0;
  while (start <= text.size()) {
    size_t end = text.find('\n', start);
    if (end == std::string::npos) end = text.size();
    const std::string line = text.substr(start, std::min<size_t>(end - start, 200));
    (void)furrow::parse_exact_decimal(line);
    for (auto kind : {furrow::TraitKind::decimal, furrow::TraitKind::count, furrow::TraitKind::score,
                      furrow::TraitKind::category, furrow::TraitKind::percent, furrow::TraitKind::date}) {
      trait.kind = kind;
      furrow::EntryContext ctx;
      ctx.other_values = {1, 2, 3, 4, 5, 6, 7, 8, 9};
      (void)furrow::check_entry(trait, line, ctx);
    }
    start = end + 1;
  }
  return 0;
}
