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
  std::string suggestion{};   // decimal_slip: the value the crew probably meant, as text to enter (else empty)
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

// The centre and robust spread of the other plots' values (median and
// 1.4826 x median absolute deviation), as the decimal-slip check uses them.
struct SlipStats {
  double median = 0, sd = 0;
};

struct EntryContext {
  std::vector<double> other_values;          // this trait and occasion, other plots
  std::vector<std::string> previous_entries; // this trait, most recent last (entry order)
  std::optional<PlotExpectation> expectation;
  // When set, used instead of computing it from other_values (which may then
  // be left empty); set only when there are kMinValuesForSlip others or more.
  std::optional<SlipStats> slip;
};

// Parses `text` for the trait's kind; on success `number` holds the numeric
// value (numbers, counts, scores, percents; dates as days since 1970-01-01).
struct ParsedValue {
  std::string text;                 // normalised text to store
  std::optional<double> number;
};
Result<ParsedValue> parse_trait_value(const Trait& trait, const std::string& text);

// All findings for a value, most severe first and, within a severity, most
// useful first (a likely slip with its suggestion, unlikely for the plot,
// outside the usual range, the rest). A value that does not parse
// gives one refuse finding.
std::vector<Finding> check_entry(const Trait& trait, const std::string& text, const EntryContext& context);

// A value typed with no plot to compare it with (a station settling a
// conflict): the parsed value, or a Problem "<text> refused: <reason>" when a
// check refuses it.
Result<ParsedValue> parse_acceptable_value(const Trait& trait, const std::string& text);

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

// One trait's values screened all at once (the Before leaving list): for
// value k, the slip statistics and the expectation that the direct
// computation from the other values gives (SlipStats from other_values;
// expect_from_means without value k), equal up to rounding, each in
// O(log n) after an O(n log n) start instead of O(n) per value.
//
// Leaving one value out moves the median by at most one rank, so there are
// at most three leave-one-out medians; for each, the absolute deviations are
// sorted once. The expectation's residual sum of squares without value k
// follows from the full fit's residuals and their sums per block, treatment
// and cell, because only value k's block and treatment means and the grand
// mean change.
class LeaveOneOut {
 public:
  LeaveOneOut(std::vector<double> values, std::vector<int> block, std::vector<int> treatment);
  std::optional<SlipStats> slip(size_t k) const;
  std::optional<PlotExpectation> expectation(size_t k) const;

 private:
  double median_without(const std::vector<double>& sorted, double removed) const;
  std::vector<double> values_, sorted_;
  std::vector<int> block_, treatment_;
  std::vector<std::pair<double, std::vector<double>>> deviations_;   // median -> sorted |x - median|
  struct Sum {
    double values = 0, residuals = 0;
    int count = 0;
  };
  std::vector<std::pair<int, Sum>> blocks_, treatments_;            // sorted by code
  std::vector<std::pair<std::pair<int, int>, int>> cells_;           // (block, treatment) -> count
  std::vector<double> residuals_;                                    // full fit: x - block mean - treatment mean + grand
  double grand_sum_ = 0, residual_sum_ = 0, residual_squares_ = 0;
};

}  // namespace furrow
