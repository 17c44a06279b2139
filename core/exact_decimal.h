#pragma once
// Exact decimal text and its centring.
//
// Field data arrive as decimal text ("1000000000000.4"). Converting such text
// to double first and subtracting the mean afterwards throws away the digits
// that differ between plots when many leading digits are constant (NIST StRD
// SmLs07-09). Instead every value is read as an exact scaled integer, a common
// offset is subtracted in exact decimal arithmetic, and only the small
// remainders become doubles.

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "core/result.h"

namespace furrow {

// value = mantissa * 10^-scale, exactly. scale may be negative for text with
// a positive exponent ("12e3" -> mantissa 12, scale -3).
struct ExactDecimal {
  __int128 mantissa = 0;
  int scale = 0;
};

// Parses optional sign, digits with at most one '.', optional exponent
// (e/E, signed integer). Leading/trailing spaces are allowed. Fails with a
// plain message (no column or record set) on anything else, on an empty
// string, or when the value needs more than 36 significant digits.
Result<ExactDecimal> parse_exact_decimal(std::string_view text);

// The response after centring: value_i = offset + centred[i].
// `offset` is the double nearest the exact offset; `offset_text` is the exact
// offset as decimal text. Each centred[i] is the exact difference rounded once
// to double.
struct CentredValues {
  double offset = 0.0;
  std::string offset_text;
  std::vector<double> centred;
};

// Centres values on the first one. Precondition: !values.empty(). Fails if
// two values are so far apart in magnitude and precision that their common
// scale overflows 36 digits (a message naming the record index is returned).
Result<CentredValues> centre_decimals(const std::vector<ExactDecimal>& values);

// Neumaier's compensated sum: stable accumulation of many terms.
class CompensatedSum {
 public:
  void add(double x) {
    const double t = sum_ + x;
    if ((sum_ >= 0 ? sum_ : -sum_) >= (x >= 0 ? x : -x))
      compensation_ += (sum_ - t) + x;
    else
      compensation_ += (x - t) + sum_;
    sum_ = t;
  }
  double value() const { return sum_ + compensation_; }

 private:
  double sum_ = 0.0;
  double compensation_ = 0.0;
};

}  // namespace furrow
