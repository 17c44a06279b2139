#pragma once
// How numbers are written in tables, on screen and in files: one place, so
// that the CLI, the Check screen and the report agree digit for digit.

#include <string>

namespace furrow {

// Significant digits for a table cell, never scientific below 1e9.
std::string table_number(double v, int digits = 6);
// Significant digits that show a value to a tenth of `spread` (a mean near
// 10^12 whose plots differ by units needs 14), at least `at_least`, at most 15.
int digits_for(double value, double spread, int at_least);
// A measured value as the crew would type it: shortest form, 6 digits.
std::string value_text(double v);
// Degrees of freedom: whole numbers without decimals.
std::string df_text(double df);
// P value with four decimals, "<0.0001" below.
std::string p_text(double p);

}  // namespace furrow
