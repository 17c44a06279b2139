#include "core/exact_decimal.h"

#include <cctype>
#include <cmath>

namespace furrow {
namespace {

// 10^36 < 2^127 / 100: room for one more digit and a subtraction.
constexpr int kMaxDigits = 36;

__int128 power_of_ten(int e) {
  __int128 p = 1;
  for (int i = 0; i < e; ++i) p *= 10;
  return p;
}

int count_digits(__int128 v) {
  if (v < 0) v = -v;
  int d = 0;
  while (v != 0) { v /= 10; ++d; }
  return d;
}

std::string to_decimal_text(__int128 mantissa, int scale) {
  const bool negative = mantissa < 0;
  unsigned __int128 m = negative ? static_cast<unsigned __int128>(-mantissa)
                                 : static_cast<unsigned __int128>(mantissa);
  std::string digits;
  do { digits.insert(digits.begin(), static_cast<char>('0' + static_cast<int>(m % 10))); m /= 10; } while (m != 0);
  if (scale > 0) {
    while (static_cast<int>(digits.size()) <= scale) digits.insert(digits.begin(), '0');
    digits.insert(digits.end() - scale, '.');
  } else {
    digits.append(static_cast<size_t>(-scale), '0');
  }
  return negative ? "-" + digits : digits;
}

// An exactly representable integer (|v| < 2^53 after reduction) divided by
// 10^scale with a single rounding where possible.
double scaled_to_double(__int128 v, int scale) {
  if (scale <= 0) return static_cast<double>(v) * std::pow(10.0, -scale);
  // Both the integer (when below 2^53) and 10^scale (scale <= 22) are exact in
  // double, so the quotient is correctly rounded.
  const __int128 limit = static_cast<__int128>(1) << 53;
  if (v < limit && v > -limit && scale <= 22)
    return static_cast<double>(v) / std::pow(10.0, scale);
  return static_cast<double>(static_cast<long double>(v) / std::pow(10.0L, scale));
}

}  // namespace

Result<ExactDecimal> parse_exact_decimal(std::string_view text) {
  size_t i = 0, n = text.size();
  while (i < n && std::isspace(static_cast<unsigned char>(text[i]))) ++i;
  while (n > i && std::isspace(static_cast<unsigned char>(text[n - 1]))) --n;
  if (i == n) return make_problem("empty value");
  bool negative = false;
  if (text[i] == '+' || text[i] == '-') { negative = text[i] == '-'; ++i; }
  __int128 mantissa = 0;
  int digits = 0, fraction_digits = 0, significant = 0;
  bool seen_point = false;
  for (; i < n; ++i) {
    const char c = text[i];
    if (c == '.') {
      if (seen_point) return make_problem("more than one decimal point in '" + std::string(text) + "'");
      seen_point = true;
      continue;
    }
    if (!std::isdigit(static_cast<unsigned char>(c))) break;
    ++digits;
    if (seen_point) ++fraction_digits;
    if (mantissa != 0 || c != '0') ++significant;
    if (significant > kMaxDigits)
      return make_problem("'" + std::string(text) + "' has more than 36 significant digits");
    mantissa = mantissa * 10 + (c - '0');
  }
  if (digits == 0) return make_problem("'" + std::string(text) + "' is not a number");
  int exponent = 0;
  if (i < n && (text[i] == 'e' || text[i] == 'E')) {
    ++i;
    bool exp_negative = false;
    if (i < n && (text[i] == '+' || text[i] == '-')) { exp_negative = text[i] == '-'; ++i; }
    int exp_digits = 0;
    for (; i < n && std::isdigit(static_cast<unsigned char>(text[i])); ++i) {
      if (exponent > 1000) return make_problem("'" + std::string(text) + "' has an exponent out of range");
      exponent = exponent * 10 + (text[i] - '0');
      ++exp_digits;
    }
    if (exp_digits == 0) return make_problem("'" + std::string(text) + "' is not a number");
    if (exp_negative) exponent = -exponent;
  }
  if (i != n) return make_problem("'" + std::string(text) + "' is not a number");
  ExactDecimal out;
  out.mantissa = negative ? -mantissa : mantissa;
  out.scale = fraction_digits - exponent;
  if (out.scale < -kMaxDigits || out.scale > 2 * kMaxDigits)
    return make_problem("'" + std::string(text) + "' is out of range");
  return out;
}

Result<CentredValues> centre_decimals(const std::vector<ExactDecimal>& values) {
  assert(!values.empty());
  int common_scale = values.front().scale;
  for (const ExactDecimal& v : values) common_scale = std::max(common_scale, v.scale);
  CentredValues out;
  const ExactDecimal& first = values.front();
  auto rescale = [&](const ExactDecimal& v, __int128* result) {
    const int shift = common_scale - v.scale;
    if (count_digits(v.mantissa) + shift > kMaxDigits) return false;
    *result = v.mantissa * power_of_ten(shift);
    return true;
  };
  __int128 offset = 0;
  if (!rescale(first, &offset))
    return make_problem("values differ too much in size and precision to be compared exactly", {}, 0);
  out.offset_text = to_decimal_text(offset, common_scale);
  out.offset = scaled_to_double(offset, common_scale);
  out.centred.reserve(values.size());
  for (size_t k = 0; k < values.size(); ++k) {
    __int128 scaled = 0;
    if (!rescale(values[k], &scaled))
      return make_problem("values differ too much in size and precision to be compared exactly", {},
                          static_cast<int>(k));
    out.centred.push_back(scaled_to_double(scaled - offset, common_scale));
  }
  return out;
}

}  // namespace furrow
