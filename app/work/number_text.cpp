#include "app/work/number_text.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace furrow {

std::string table_number(double v, int digits) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  const double a = std::abs(v);
  if (a != 0 && (a < 1e-4 || a >= 1e9)) std::snprintf(buf, sizeof buf, "%.*g", digits, v);
  else {
    const int before = a >= 1 ? static_cast<int>(std::floor(std::log10(a))) + 1 : 1;
    std::snprintf(buf, sizeof buf, "%.*f", std::max(0, digits - before), v);
  }
  return buf;
}

int digits_for(double value, double spread, int at_least) {
  if (!(spread > 0) || !std::isfinite(value) || value == 0) return at_least;
  const double ratio = std::abs(value) / spread;
  if (!std::isfinite(ratio) || ratio > 1e15) return std::max(at_least, 15);
  const int needed = static_cast<int>(std::ceil(std::log10(ratio))) + 2;
  return std::clamp(needed, at_least, 15);
}

std::string value_text(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

std::string df_text(double df) {
  if (df == std::floor(df)) return std::to_string(static_cast<long long>(df));
  return table_number(df, 4);
}

std::string p_text(double p) {
  if (p < 0.0001) return "<0.0001";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4f", p);
  return buf;
}

}  // namespace furrow
