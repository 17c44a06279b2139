#include "app/work/glossary.h"

#include <cmath>
#include <cstdio>

namespace furrow::term {

std::string plural(std::string_view singular) {
  // Phrases whose head noun is not the last word.
  for (std::string_view head : {std::string_view("value to check"), std::string_view("value not recorded")})
    if (singular == head) return "values" + std::string(singular.substr(5));
  if (singular.ends_with("s") || singular.ends_with("x") || singular.ends_with("ch")) return std::string(singular) + "es";
  return std::string(singular) + "s";
}

std::string count_of(long n, std::string_view singular) {
  return std::to_string(n) + " " + (n == 1 ? std::string(singular) : plural(singular));
}

namespace {
std::string level_text(double alpha) {
  char b[32];
  std::snprintf(b, sizeof b, "%g", 100 * alpha);
  return b;
}
}  // namespace

std::string lsd_title(double alpha) { return "LSD (" + level_text(alpha) + " %)"; }
std::string hsd_title(double alpha) { return "Tukey HSD (" + level_text(alpha) + " %)"; }

}  // namespace furrow::term
