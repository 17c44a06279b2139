// furrow: the command-line entry point. Subcommands are thin: they parse
// arguments and hand over to core/ and storage/.

#include <CLI/CLI.hpp>
#include <iostream>

#include "app/cli_analyze.h"

int main(int argc, char** argv) {
  CLI::App app{"Furrow: plot-by-plot field trial data checks and interim analysis"};
  app.require_subcommand(1);

  furrow::AnalyzeRequest q;
  std::string response_list;
  std::string treatment_list;
  auto* analyze = app.add_subcommand("analyze", "Interim analysis of variance of a trait from a CSV file");
  analyze->add_option("--csv", q.csv_path, "CSV file, one line per plot, first line column names")->required();
  analyze->add_option("--design", q.design, "crd | rcbd | latin | factorial | split-plot | multi-site")->required();
  analyze->add_option("--response", response_list, "trait column(s) to analyse, comma separated")->required();
  analyze->add_option("--treatment", treatment_list, "treatment column(s), comma separated");
  analyze->add_option("--block", q.block, "block (replicate) column");
  analyze->add_option("--row", q.row, "row column (Latin square)");
  analyze->add_option("--column", q.column, "column column (Latin square)");
  analyze->add_option("--main-plot", q.main_plot, "main-plot factor column (split-plot)");
  analyze->add_option("--sub-plot", q.sub_plot, "sub-plot factor column (split-plot)");
  analyze->add_option("--site", q.site, "site column (several sites)");
  analyze->add_flag("--sites-random", q.sites_random, "sites are a random sample: test treatments against site x treatment");
  analyze->add_flag("--treatments-random", q.treatments_random, "treatments (e.g. genotypes) are random: variance components and heritability");
  analyze->add_option("--alpha", q.alpha, "significance level for LSD, HSD and letters (default 0.05)");
  analyze->add_option("--sums", q.sums, "sequential | partial (default partial)");
  analyze->add_option("--outliers", q.outliers, "threshold | holm (default threshold: |studentized residual| > 3)");
  analyze->add_flag("--json", q.json, "print one JSON object instead of tables");

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    app.exit(e);
    return 2;
  }
  auto split = [](const std::string& s) {
    std::vector<std::string> out;
    std::string cur;
    for (char c : s) {
      if (c == ',') { out.push_back(cur); cur.clear(); } else cur += c;
    }
    if (!s.empty()) out.push_back(cur);
    return out;
  };
  q.responses = split(response_list);
  q.treatments = split(treatment_list);
  if (analyze->parsed()) return furrow::run_analyze(q);
  return 2;
}
