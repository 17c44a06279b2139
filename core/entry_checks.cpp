#include "core/entry_checks.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "core/exact_decimal.h"

namespace furrow {

const char* severity_key(Severity s) {
  switch (s) {
    case Severity::note: return "note";
    case Severity::confirm: return "confirm";
    case Severity::refuse: return "refuse";
  }
  return "?";
}

namespace {

// Median absolute deviation to SD for normal data (Hampel 1974).
constexpr double kMadToSd = 1.4826;
// Longest text value kept.
constexpr size_t kMaxTextLength = 500;

std::string number_text(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.10g", v);
  return buf;
}

// The slip's likely value as the crew would type it: no more decimals than
// the trait is measured to (so that it passes the decimals check), trailing
// zeros dropped.
std::string slip_suggestion(const Trait& trait, double meant) {
  const int decimals = trait.kind == TraitKind::count || trait.kind == TraitKind::score ? 0 : std::max(0, trait.decimals);
  char buf[48];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, meant);
  std::string t = buf;
  if (t.find('.') != std::string::npos) {
    while (t.back() == '0') t.pop_back();
    if (t.back() == '.') t.pop_back();
  }
  return t;
}

double median(std::vector<double> v) {
  const size_t n = v.size();
  const auto mid = v.begin() + static_cast<long>(n / 2);
  std::nth_element(v.begin(), mid, v.end());
  if (n % 2) return *mid;
  return 0.5 * (*std::max_element(v.begin(), mid) + *mid);
}

// Days since 1970-01-01 for a valid YYYY-MM-DD date (civil calendar).
std::optional<double> parse_date(const std::string& s) {
  int y = 0, m = 0, d = 0;
  char tail = 0;
  if (s.size() != 10 || std::sscanf(s.c_str(), "%4d-%2d-%2d%c", &y, &m, &d, &tail) != 3) return std::nullopt;
  if (m < 1 || m > 12 || d < 1) return std::nullopt;
  static constexpr int kDays[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
  if (d > kDays[m - 1] + (m == 2 && leap ? 1 : 0)) return std::nullopt;
  // Days from civil (H. Hinnant's algorithm).
  y -= m <= 2;
  const int era = (y >= 0 ? y : y - 399) / 400;
  const int yoe = y - era * 400;
  const int doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const int doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return static_cast<double>(era * 146097 + doe - 719468);
}

}  // namespace

Result<ParsedValue> parse_trait_value(const Trait& trait, const std::string& raw) {
  std::string text = raw;
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.pop_back();
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.erase(0, 1);
  if (text.empty()) return make_problem("no value was entered");
  ParsedValue out;
  out.text = text;
  switch (trait.kind) {
    case TraitKind::text:
      if (text.size() > kMaxTextLength) return make_problem("the text is longer than 500 characters");
      return out;
    case TraitKind::category:
      if (std::find(trait.categories.begin(), trait.categories.end(), text) == trait.categories.end()) {
        std::string list;
        for (const auto& c : trait.categories) list += (list.empty() ? "" : ", ") + c;
        return make_problem("'" + text + "' is not one of the categories of " + trait.name + ": " + list);
      }
      return out;
    case TraitKind::date: {
      const auto d = parse_date(text);
      if (!d) return make_problem("'" + text + "' is not a date written as YYYY-MM-DD");
      out.number = *d;
      return out;
    }
    default: break;
  }
  const auto exact = parse_exact_decimal(text);
  if (!exact) return make_problem("'" + text + "' is not a number");
  const double v = std::strtod(text.c_str(), nullptr);
  if (!std::isfinite(v)) return make_problem("'" + text + "' is out of range");
  out.number = v;
  const int decimals = std::max(0, exact->scale);
  if (trait.kind == TraitKind::count || trait.kind == TraitKind::score) {
    if (v != std::floor(v)) return make_problem("'" + text + "' is not a whole number; " + trait.name + " is a " +
                                                (trait.kind == TraitKind::count ? "count" : "score"));
    if (trait.kind == TraitKind::count && v < 0) return make_problem("a count cannot be negative");
    if (trait.kind == TraitKind::score && (v < trait.scale_min || v > trait.scale_max))
      return make_problem(text + " is not on the " + std::to_string(trait.scale_min) + "-" +
                          std::to_string(trait.scale_max) + " scale of " + trait.name);
    out.text = number_text(v);
  } else {
    if (trait.kind == TraitKind::percent && (v < 0 || v > 100)) return make_problem("a percent lies between 0 and 100");
    // One way to write a number: no exponent, no plus sign, a digit on each
    // side of the point ("+96" is 96, ".5" is 0.5, "96." is 96).
    if (text.find_first_of("eE") != std::string::npos)
      return make_problem("'" + text + "': write the number without an exponent, as on the tape or scale");
    std::string t = text;
    if (t.front() == '+') t.erase(0, 1);
    const bool negative = !t.empty() && t.front() == '-';
    if (negative) t.erase(0, 1);
    if (!t.empty() && t.front() == '.') t.insert(0, "0");
    if (!t.empty() && t.back() == '.') t.pop_back();
    out.text = (negative ? "-" : "") + t;
    if (decimals > trait.decimals)
      return make_problem(trait.name + " is recorded to " + std::to_string(trait.decimals) +
                          (trait.decimals == 1 ? " decimal" : " decimals") + "; '" + text + "' has " +
                          std::to_string(decimals));
  }
  return out;
}

std::vector<Finding> check_entry(const Trait& trait, const std::string& text, const EntryContext& context) {
  std::vector<Finding> out;
  const auto parsed = parse_trait_value(trait, text);
  if (!parsed) {
    out.push_back({Severity::refuse, "value", parsed.problem().message});
    return out;
  }
  const std::string unit = trait.unit.empty() ? "" : " " + trait.unit;
  if (parsed->number) {
    const double v = *parsed->number;
    const std::string shown = parsed->text + unit;
    // A likely decimal slip: far from the other plots, while ten times or a
    // tenth of it is near them. Worked out first, so that a value refused for
    // the possible range still offers what was probably meant.
    const bool numeric_kind = trait.kind == TraitKind::decimal || trait.kind == TraitKind::percent ||
                              trait.kind == TraitKind::count;
    std::optional<SlipStats> slip = context.slip;
    if (!slip && static_cast<int>(context.other_values.size()) >= kMinValuesForSlip) {
      const double med = median(context.other_values);
      std::vector<double> dev;
      for (double x : context.other_values) dev.push_back(std::abs(x - med));
      slip = SlipStats{med, kMadToSd * median(dev)};
    }
    std::optional<Finding> slip_finding;
    if (numeric_kind && slip && v != 0 && slip->sd > 0) {
      const double med = slip->median;
      const double sd = slip->sd;
      const double z = std::abs(v - med) / sd;
      const double z_times = std::abs(10 * v - med) / sd;
      const double z_tenth = std::abs(v / 10 - med) / sd;
      if (z > kSlipFarZ && std::min(z_times, z_tenth) < kSlipNearZ) {
        const double meant = z_times < z_tenth ? 10 * v : v / 10;
        slip_finding = Finding{Severity::confirm, "decimal_slip",
                               shown + " looks like a decimal slip: the other plots are near " + number_text(med) + unit +
                                   ". Did you mean " + number_text(meant) + unit + "?",
                               slip_suggestion(trait, meant)};
      }
    }
    if ((trait.hard_min && v < *trait.hard_min) || (trait.hard_max && v > *trait.hard_max)) {
      Finding refused{Severity::refuse, "hard_limit",
                      shown + " is outside the possible range of " + trait.name + " (" +
                          (trait.hard_min ? number_text(*trait.hard_min) : "") + " to " +
                          (trait.hard_max ? number_text(*trait.hard_max) : "") + unit + ")"};
      if (slip_finding) {
        refused.message += ". " + slip_finding->message;
        refused.suggestion = slip_finding->suggestion;
      }
      out.push_back(refused);
      return out;
    }
    if ((trait.soft_min && v < *trait.soft_min) || (trait.soft_max && v > *trait.soft_max))
      out.push_back({Severity::confirm, "soft_limit",
                     shown + " is outside the usual range of " + trait.name + " (" +
                         (trait.soft_min ? number_text(*trait.soft_min) : "") + " to " +
                         (trait.soft_max ? number_text(*trait.soft_max) : "") + unit + "): check and confirm"});
    if (slip_finding) out.push_back(*slip_finding);
    if (context.expectation && context.expectation->sd > 0) {
      const PlotExpectation& e = *context.expectation;
      const double z = std::abs(v - e.expected) / e.sd;
      if (z > kUnlikelyZ) {
        char range[96];
        std::snprintf(range, sizeof range, "%.4g to %.4g", e.expected - 2 * e.sd, e.expected + 2 * e.sd);
        out.push_back({Severity::confirm, "unlikely",
                       shown + " is unlikely for this plot: its block and treatment suggest about " +
                           number_text(std::round(e.expected * 100) / 100) + unit + " (usually " + range + unit +
                           "). Re-measure or confirm"});
      }
    }
  }
  const auto& prev = context.previous_entries;
  if (static_cast<int>(prev.size()) >= kRepeatRun - 1 &&
      std::all_of(prev.end() - (kRepeatRun - 1), prev.end(), [&](const std::string& p) { return p == parsed->text; }))
    out.push_back({Severity::note, "repeated",
                   "the same value as the last " + std::to_string(kRepeatRun - 1) + " plots: was each one measured?"});
  const auto usefulness = [](const Finding& f) {
    return f.check == "decimal_slip" ? 0 : f.check == "unlikely" ? 1 : f.check == "soft_limit" ? 2 : 3;
  };
  std::stable_sort(out.begin(), out.end(), [&](const Finding& a, const Finding& b) {
    if (a.severity != b.severity) return a.severity > b.severity;
    return usefulness(a) < usefulness(b);
  });
  return out;
}

Result<ParsedValue> parse_acceptable_value(const Trait& trait, const std::string& text) {
  for (const Finding& f : check_entry(trait, text, EntryContext{}))
    if (f.severity == Severity::refuse) return make_problem(text + " refused: " + f.message);
  return parse_trait_value(trait, text);
}

std::optional<Severity> worst(const std::vector<Finding>& findings) {
  std::optional<Severity> w;
  for (const Finding& f : findings)
    if (!w || f.severity > *w) w = f.severity;
  return w;
}

std::optional<PlotExpectation> expect_from_means(const std::vector<double>& values, const std::vector<int>& block,
                                                 const std::vector<int>& treatment, int target_block,
                                                 int target_treatment) {
  const size_t n = values.size();
  std::map<int, std::pair<double, int>> bsum, tsum;
  double grand = 0;
  for (size_t i = 0; i < n; ++i) {
    grand += values[i];
    bsum[block[i]].first += values[i];
    ++bsum[block[i]].second;
    tsum[treatment[i]].first += values[i];
    ++tsum[treatment[i]].second;
  }
  if (n == 0) return std::nullopt;
  grand /= static_cast<double>(n);
  const double df = static_cast<double>(n) - static_cast<double>(bsum.size()) - static_cast<double>(tsum.size()) + 1;
  if (df < 10 || static_cast<double>(n) < 2.0 * static_cast<double>(tsum.size())) return std::nullopt;
  if (!bsum.count(target_block) || !tsum.count(target_treatment)) return std::nullopt;
  auto mean = [](const std::pair<double, int>& s) { return s.first / s.second; };
  double rss = 0;
  for (size_t i = 0; i < n; ++i) {
    const double fit = mean(bsum[block[i]]) + mean(tsum[treatment[i]]) - grand;
    rss += (values[i] - fit) * (values[i] - fit);
  }
  const double s2 = rss / df;
  PlotExpectation e;
  e.expected = mean(bsum[target_block]) + mean(tsum[target_treatment]) - grand;
  e.sd = std::sqrt(s2 * (1 + 1.0 / tsum[target_treatment].second + 1.0 / bsum[target_block].second));
  return e;
}

namespace {

template <typename Key, typename Value>
const Value* find_sorted(const std::vector<std::pair<Key, Value>>& v, const Key& key) {
  const auto it = std::lower_bound(v.begin(), v.end(), key, [](const auto& e, const Key& k) { return e.first < k; });
  return it != v.end() && it->first == key ? &it->second : nullptr;
}

// The median of `sorted` with the element at index p left out, averaging as
// median() does.
double median_skipping(const std::vector<double>& sorted, size_t p) {
  const size_t m = sorted.size() - 1;
  const auto at = [&](size_t r) { return r < p ? sorted[r] : sorted[r + 1]; };
  if (m % 2) return at(m / 2);
  return 0.5 * (at(m / 2 - 1) + at(m / 2));
}

}  // namespace

LeaveOneOut::LeaveOneOut(std::vector<double> values, std::vector<int> block, std::vector<int> treatment)
    : values_(std::move(values)), block_(std::move(block)), treatment_(std::move(treatment)) {
  const size_t n = values_.size();
  sorted_ = values_;
  std::sort(sorted_.begin(), sorted_.end());
  if (n >= 2) {
    // The distinct leave-one-out medians (at most three), each with its sorted deviations.
    for (size_t p = 0; p < n; ++p) {
      const double m = median_skipping(sorted_, p);
      if (std::none_of(deviations_.begin(), deviations_.end(), [&](const auto& d) { return d.first == m; })) {
        std::vector<double> dev(n);
        for (size_t j = 0; j < n; ++j) dev[j] = std::abs(sorted_[j] - m);
        std::sort(dev.begin(), dev.end());
        deviations_.push_back({m, std::move(dev)});
      }
    }
  }
  std::map<int, Sum> b, t;
  std::map<std::pair<int, int>, int> c;
  for (size_t i = 0; i < n; ++i) {
    grand_sum_ += values_[i];
    b[block_[i]].values += values_[i];
    ++b[block_[i]].count;
    t[treatment_[i]].values += values_[i];
    ++t[treatment_[i]].count;
    ++c[{block_[i], treatment_[i]}];
  }
  const double grand = n ? grand_sum_ / static_cast<double>(n) : 0.0;
  residuals_.resize(n);
  for (size_t i = 0; i < n; ++i) {
    Sum& bs = b[block_[i]];
    Sum& ts = t[treatment_[i]];
    const double r = values_[i] - bs.values / bs.count - ts.values / ts.count + grand;
    residuals_[i] = r;
    bs.residuals += r;
    ts.residuals += r;
    residual_sum_ += r;
    residual_squares_ += r * r;
  }
  blocks_.assign(b.begin(), b.end());
  treatments_.assign(t.begin(), t.end());
  cells_.assign(c.begin(), c.end());
}

double LeaveOneOut::median_without(const std::vector<double>& sorted, double removed) const {
  const size_t p = static_cast<size_t>(std::lower_bound(sorted.begin(), sorted.end(), removed) - sorted.begin());
  return median_skipping(sorted, p);
}

std::optional<SlipStats> LeaveOneOut::slip(size_t k) const {
  if (static_cast<int>(values_.size()) - 1 < kMinValuesForSlip) return std::nullopt;
  const double m = median_without(sorted_, values_[k]);
  const auto d = std::find_if(deviations_.begin(), deviations_.end(), [&](const auto& e) { return e.first == m; });
  return SlipStats{m, kMadToSd * median_without(d->second, std::abs(values_[k] - m))};
}

std::optional<PlotExpectation> LeaveOneOut::expectation(size_t k) const {
  const size_t n = values_.size();
  if (n < 2) return std::nullopt;
  const Sum& bs = *find_sorted(blocks_, block_[k]);
  const Sum& ts = *find_sorted(treatments_, treatment_[k]);
  // Value k alone in its block or treatment: the others say nothing of it.
  if (bs.count < 2 || ts.count < 2) return std::nullopt;
  const double n1 = static_cast<double>(n - 1);
  const double df = n1 - static_cast<double>(blocks_.size()) - static_cast<double>(treatments_.size()) + 1;
  if (df < 10 || n1 < 2.0 * static_cast<double>(treatments_.size())) return std::nullopt;
  const double x = values_[k];
  const double grand = grand_sum_ / static_cast<double>(n), grand1 = (grand_sum_ - x) / n1;
  const double bmean = bs.values / bs.count, bmean1 = (bs.values - x) / (bs.count - 1);
  const double tmean = ts.values / ts.count, tmean1 = (ts.values - x) / (ts.count - 1);
  // Residuals of the others move by -a in k's block, -d in k's treatment and +c everywhere.
  const double a = bmean1 - bmean, d = tmean1 - tmean, c = grand1 - grand;
  const double rk = residuals_[k];
  const double nb = bs.count - 1, nt = ts.count - 1, nbt = *find_sorted(cells_, std::pair{block_[k], treatment_[k]}) - 1;
  const double sr2 = residual_squares_ - rk * rk, sr = residual_sum_ - rk;
  const double sbr = bs.residuals - rk, str = ts.residuals - rk;
  const double rss = sr2 + a * a * nb + d * d * nt + c * c * n1 + 2 * a * d * nbt - 2 * a * c * nb - 2 * d * c * nt -
                     2 * a * sbr - 2 * d * str + 2 * c * sr;
  PlotExpectation e;
  e.expected = bmean1 + tmean1 - grand1;
  e.sd = std::sqrt(std::max(0.0, rss / df) * (1 + 1.0 / nt + 1.0 / nb));
  return e;
}

}  // namespace furrow
