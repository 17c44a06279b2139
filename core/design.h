#pragma once
// Design kinds and the model each one implies: its terms in fitting order and
// the error term each treatment term is tested against (ARCHITECTURE.md,
// "Analysis"). Designs are chosen by name; nobody types a model formula.

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/result.h"

namespace furrow {

enum class DesignKind {
  completely_randomised,
  randomised_complete_block,
  latin_square,
  factorial,
  split_plot,
  multi_site,
};

// The short keys used on the command line and in files: crd, rcbd, latin,
// factorial, split-plot, multi-site.
std::optional<DesignKind> parse_design_kind(std::string_view key);
const char* design_kind_key(DesignKind kind);
const char* design_kind_title(DesignKind kind);   // plain words, e.g. "randomised complete block"

// Which data column plays which part. Column names are the user's own.
struct DesignRoles {
  DesignKind kind = DesignKind::randomised_complete_block;
  std::vector<std::string> treatments;  // one for crd/rcbd/latin/multi-site; 2-3 for factorial
  std::string block;                    // rcbd, split-plot, multi-site; optional for factorial
  std::string row, column;              // latin
  std::string main_plot, sub_plot;      // split-plot
  std::string site;                     // multi-site
  bool sites_random = false;
  bool treatments_random = false;       // genotypes drawn from a population: variance components
  // Factorial, split-plot, several sites: leave the treatment interactions
  // out of the model (main effects only), as asked when cells are missing.
  bool without_interaction = false;
};

// How a term is tested.
enum class TermRole {
  blocking,    // block, row, column, site, block within site
  treatment,   // a treatment main effect or interaction: F, means, comparisons
  error,       // a stratum error such as block x main plot: no F of its own
};

struct ModelTerm {
  std::string label;          // column name, or names joined by " x ", or "B within S"
  std::vector<int> factors;   // ascending indices into DesignModel::factor_columns
  TermRole role = TermRole::treatment;
  int error_term = -1;        // index of the term whose mean square is the F denominator; -1 = residual
};

struct DesignModel {
  DesignKind kind = DesignKind::randomised_complete_block;
  std::vector<std::string> factor_columns;   // distinct columns the model uses
  std::vector<ModelTerm> terms;              // fitting order, marginal terms first
  std::vector<std::vector<int>> grid_groups; // reference grid for least-squares means
  int block_factor = -1;                     // index into factor_columns, -1 if none
  int site_factor = -1;
  std::vector<int> treatment_factors;        // in the order given
  bool sites_random = false;
  bool treatments_random = false;
  bool without_interaction = false;
};

// Checks that the roles fit the kind (the right columns named, no column in
// two roles) and builds the model. Problems name the missing or extra role.
Result<DesignModel> build_design_model(const DesignRoles& roles);

}  // namespace furrow
