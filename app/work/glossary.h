#pragma once
// One vocabulary: every user-facing term that the field app, the command
// line and the report share, in one place, with its plural. A term of the
// trade (plot, block, DF, SS, MS, F, P, CV, LSD, Tukey HSD) is used as the
// trade uses it; the rest are our own words. Change a word here, not in a
// screen.

#include <string>
#include <string_view>

namespace furrow::term {

// Findings.
inline constexpr const char* kConflict = "conflict";            // two devices' different values for one cell
inline constexpr const char* kOutlierPlot = "outlier plot";     // far from what the other plots predict
inline constexpr const char* kValueToCheck = "value to check";  // a saved value the entry checks still ask about
inline constexpr const char* kNotRecorded = "not recorded yet";
inline constexpr const char* kNotEstimable = "not estimable";
// Columns of the analysis, in every output.
inline constexpr const char* kTerm = "Term";
inline constexpr const char* kTestedAgainst = "Tested against";   // the error term a term's F uses
inline constexpr const char* kPlots = "Plots";                    // plots behind a mean
inline constexpr const char* kMean = "Mean";
inline constexpr const char* kSe = "SE";
inline constexpr const char* kLsdGroup = "LSD group";
inline constexpr const char* kHsdGroup = "HSD group";
// Screens and places.
inline constexpr const char* kBeforeLeaving = "Before leaving";
inline constexpr const char* kTodaysWalk = "Today's walk";
inline constexpr const char* kValueIsRight = "Value is right";

// The plural of a glossary term or a plain noun phrase whose first word takes
// the plural ("value to check" -> "values to check", "outlier plot" ->
// "outlier plots").
std::string plural(std::string_view singular);

// "1 conflict", "2 conflicts", "0 values to check".
std::string count_of(long n, std::string_view singular);

// "LSD (5 %)", "Tukey HSD (1 %)": the significance level, as the trade names it.
std::string lsd_title(double alpha);
std::string hsd_title(double alpha);

}  // namespace furrow::term

namespace furrow {
using term::count_of;
}
