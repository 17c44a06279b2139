#pragma once
// Checks on one entered value, before it is saved. Each finding has a
// severity and a plain-words message for the crew:
//   refuse  - the value cannot be right (outside hard limits, not on the
//             scale, more decimals than the trait is measured to, unknown plot)
//   confirm - possible but unusual: saved only when the crew confirms
//             (outside soft limits, a likely decimal slip, unlikely for this
//             plot given the current fit of blocks and treatments)
//   note    - worth a glance (the same value as the last few plots)

#include <optional>
#include <string>
#include <vector>

#include "core/trial_plan.h"

namespace furrow {

enum class Severity { note, confirm, refuse };
const char* severity_key(Severity s);

struct Finding {
  Severity severity = Severity::note;
  std::string check;     // short key: hard_limit, soft_limit, decimals, scale, category, date, number,
                         // decimal_slip, repeated, unlikely
  std::string message;
};

// A decimal slip is considered once a trait has this many other values, and
// flagged when the value lies more than kSlipFarZ robust SDs from their median
// while ten times or a tenth of it lies within kSlipNearZ (common practice
// for robust screening; the constants are ours).
inline constexpr int kMinValuesForSlip = 8;
inline constexpr double kSlipFarZ = 4.0;
inline constexpr double kSlipNearZ = 2.0;
// The same value this many times in a row (including the new one) is noted.
inline constexpr int kRepeatRun = 4;
// "Unlikely for this plot": more than this many prediction SDs from the value
// expected from the current block and treatment means.
inline constexpr double kUnlikelyZ = 3.5;

// What the current data say about the plot being entered.
struct PlotExpectation {
  double expected = 0;
  double sd = 0;          // prediction SD for a new plot
};

struct EntryContext {
  std::vector<double> other_values;          // this trait and occasion, other plots
  std::vector<std::string> previous_entries; // this trait, most recent last (entry order)
  std::optional<PlotExpectation> expectation;
};

// Parses `text` for the trait's kind; on success `number` holds the numeric
// value (numbers, counts, scores, percents; dates as days since 1970-01-01).
struct ParsedValue {
  std::string text;                 // normalised text to store
  std::optional<double> number;
};
Result<ParsedValue> parse_trait_value(const Trait& trait, const std::string& text);

// All findings for a value, most severe first. A value that does not parse
// gives one refuse finding.
std::vector<Finding> check_entry(const Trait& trait, const std::string& text, const EntryContext& context);

// The worst severity in the findings, or nullopt when there are none.
std::optional<Severity> worst(const std::vector<Finding>& findings);

// Expected value for a plot from plain means of the current values: grand
// mean + (treatment mean - grand) + (block mean - grand), with a prediction
// SD from the residual of that additive fit. Needs at least 2 values per
// treatment on average and 10 residual degrees of freedom, else nullopt.
// `block` and `treatment` are codes per value; the target's codes last.
std::optional<PlotExpectation> expect_from_means(const std::vector<double>& values, const std::vector<int>& block,
                                                 const std::vector<int>& treatment, int target_block,
                                                 int target_treatment);

}  // namespace furrow
