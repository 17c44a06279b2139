#include "app/cli/cli_analyze.h"

#include <iostream>

#include "app/cli/analysis_output.h"
#include "storage/csv_table.h"

namespace furrow {
namespace {

constexpr int kExitBadInput = 2;

int report(const std::string& file, int line, const std::string& column, const std::string& message) {
  std::cerr << file;
  if (line > 0) std::cerr << ":" << line;
  std::cerr << ": ";
  if (!column.empty()) std::cerr << "column '" << column << "': ";
  std::cerr << message << "\n";
  return kExitBadInput;
}

// What kind of character that does not show when printed `v` holds, or
// null: control characters (C0, DEL, C1), no-break and other fixed-width
// spaces, zero-width and direction marks, soft hyphens, byte-order marks
// and fillers that print as nothing. Text that is not UTF-8 is left to the
// CSV reader, which refuses it.
const char* invisible_character(const std::string& v) {
  for (size_t i = 0; i < v.size();) {
    const auto b = static_cast<unsigned char>(v[i]);
    char32_t cp = b;
    size_t len = 1;
    if (b >= 0xF0 && i + 3 < v.size()) {
      cp = ((b & 0x07u) << 18) | ((static_cast<unsigned char>(v[i + 1]) & 0x3Fu) << 12) |
           ((static_cast<unsigned char>(v[i + 2]) & 0x3Fu) << 6) | (static_cast<unsigned char>(v[i + 3]) & 0x3Fu);
      len = 4;
    } else if (b >= 0xE0 && i + 2 < v.size()) {
      cp = ((b & 0x0Fu) << 12) | ((static_cast<unsigned char>(v[i + 1]) & 0x3Fu) << 6) |
           (static_cast<unsigned char>(v[i + 2]) & 0x3Fu);
      len = 3;
    } else if (b >= 0xC0 && i + 1 < v.size()) {
      cp = ((b & 0x1Fu) << 6) | (static_cast<unsigned char>(v[i + 1]) & 0x3Fu);
      len = 2;
    }
    i += len;
    if (cp < 0x20 || (cp >= 0x7F && cp <= 0x9F)) return "a control character";
    if (cp == 0xA0 || cp == 0x2007 || cp == 0x202F) return "a no-break space";
    if (cp == 0xAD) return "a soft hyphen";
    if (cp == 0xFEFF) return "a byte-order mark";
    if ((cp >= 0x200B && cp <= 0x200F) || (cp >= 0x2060 && cp <= 0x2064) || cp == 0x180E)
      return "a zero-width character";
    if ((cp >= 0x202A && cp <= 0x202E) || (cp >= 0x2066 && cp <= 0x2069) || cp == 0x061C)
      return "a direction mark";
    if ((cp >= 0x2000 && cp <= 0x200A) || cp == 0x205F || cp == 0x3000 || cp == 0x2028 || cp == 0x2029 || cp == 0x1680)
      return "an unusual space";
    if (cp == 0x3164 || cp == 0xFFA0 || cp == 0x115F || cp == 0x1160 || cp == 0x2800) return "a filler character";
  }
  return nullptr;
}

}  // namespace

int run_analyze(const AnalyzeRequest& q) {
  const auto kind = parse_design_kind(q.design);
  if (!kind)
    return report(q.csv_path, 0, {}, "unknown design '" + q.design +
                                         "'; choose one of crd, rcbd, latin, factorial, split-plot, multi-site");
  DesignRoles roles;
  roles.kind = *kind;
  roles.treatments = q.treatments;
  roles.block = q.block;
  roles.row = q.row;
  roles.column = q.column;
  roles.main_plot = q.main_plot;
  roles.sub_plot = q.sub_plot;
  roles.site = q.site;
  roles.sites_random = q.sites_random;
  roles.treatments_random = q.treatments_random;
  roles.without_interaction = q.without_interaction;
  if (*kind == DesignKind::split_plot && roles.treatments.empty() == false &&
      (roles.main_plot.empty() || roles.sub_plot.empty()) && roles.treatments.size() != 2)
    return report(q.csv_path, 0, {}, "split-plot needs --main-plot and --sub-plot (or two --treatment columns)");
  if (*kind == DesignKind::split_plot && !roles.main_plot.empty() && !roles.sub_plot.empty())
    roles.treatments.clear();
  // Options the chosen design does not use are refused rather than ignored.
  {
    const bool crd = *kind == DesignKind::completely_randomised;
    const bool latin = *kind == DesignKind::latin_square, split = *kind == DesignKind::split_plot;
    const bool sites = *kind == DesignKind::multi_site;
    const std::pair<const char*, bool> unused[] = {
        {"--block", !q.block.empty() && (crd || latin)},
        {"--row", !q.row.empty() && !latin},
        {"--column", !q.column.empty() && !latin},
        {"--main-plot", !q.main_plot.empty() && !split},
        {"--sub-plot", !q.sub_plot.empty() && !split},
        {"--site", !q.site.empty() && !sites},
        {"--sites-random", q.sites_random && !sites},
    };
    for (const auto& [option, bad] : unused)
      if (bad)
        return report(q.csv_path, 0, {}, std::string(option) + " is not used by the " + q.design +
                                             " design; leave it out, or choose the design that has it");
  }
  // One column in two roles (the response also a treatment, say) cannot be analysed.
  {
    std::vector<std::pair<std::string, std::string>> named;
    for (const std::string& t : roles.treatments) named.emplace_back(t, "--treatment");
    for (const auto& [col, option] : {std::pair{q.block, "--block"}, {q.row, "--row"}, {q.column, "--column"},
                                      {q.main_plot, "--main-plot"}, {q.sub_plot, "--sub-plot"}, {q.site, "--site"}})
      if (!col.empty()) named.emplace_back(col, option);
    for (const std::string& r : q.responses) named.emplace_back(r, "--response");
    for (size_t i = 0; i < named.size(); ++i)
      for (size_t j = i + 1; j < named.size(); ++j)
        if (named[i].first == named[j].first)
          return report(q.csv_path, 0, {}, "column '" + named[i].first + "' is named by both " +
                                                           named[i].second + " and " + named[j].second +
                                                           "; each column has one role");
  }
  if (!(q.alpha >= 0.01 && q.alpha <= 0.10))
    return report(q.csv_path, 0, {}, "--alpha must lie between 0.01 and 0.10 (e.g. 0.05): the range over which the studentized-range quantiles are checked");
  AnalysisOptions options;
  options.alpha = q.alpha;
  if (q.sums == "sequential") options.sums = SumsKind::sequential;
  else if (q.sums == "partial") options.sums = SumsKind::partial;
  else return report(q.csv_path, 0, {}, "--sums must be sequential or partial, not '" + q.sums + "'");
  if (q.outliers == "holm") options.outlier_rule = OutlierRule::bonferroni_holm;
  else if (q.outliers != "threshold")
    return report(q.csv_path, 0, {}, "--outliers must be threshold or holm, not '" + q.outliers + "'");

  const CsvRead read = read_csv_file(q.csv_path);
  if (!read.ok) return report(q.csv_path, read.problem.line, read.problem.column, read.problem.message);
  const std::vector<int>& lines = read.csv.line_of_record;
  // A factor level with a character that does not show (a control
  // character, a no-break or zero-width space, a byte-order mark) would
  // print exactly like another level and be analysed as a different one.
  {
    std::vector<std::string> factor_columns = q.treatments;
    for (const std::string* c : {&q.block, &q.row, &q.column, &q.main_plot, &q.sub_plot, &q.site})
      if (!c->empty()) factor_columns.push_back(*c);
    for (const std::string& name : factor_columns) {
      const DataColumn* col = read.csv.table.find(name);
      if (!col) continue;
      for (size_t r = 0; r < col->cells.size(); ++r) {
        const std::string& v = col->cells[r];
        const char* what = invisible_character(v);
        if (what)
          return report(q.csv_path, lines[r], name,
                        std::string("'") + name + "' holds " + what + " that does not show when printed; remove it, or "
                        "two levels that look alike would be analysed apart");
      }
    }
  }
  RecordNames names;
  for (int l : lines) names.names.push_back(std::to_string(l));
  // A problem with a record points at its line; with a column as a whole, at the header line.
  const auto report_problem = [&](const Problem& p) {
    const int line = p.record >= 0 && p.record < static_cast<int>(lines.size()) ? lines[p.record]
                     : !p.column.empty()                                       ? read.csv.header_line
                                                                               : 0;
    return report(q.csv_path, line, p.column, p.message);
  };
  if (q.method == "reml") {
    MixedAnalysisOptions mo;
    mo.alpha = q.alpha;
    mo.trend = q.field_trend == "test" ? FieldTrendChoice::test
               : q.field_trend == "always" ? FieldTrendChoice::always
                                           : FieldTrendChoice::off;
    mo.row_column = q.row_position;
    mo.col_column = q.column_position;
    mo.linear_row = q.straight_trend == "rows" || q.straight_trend == "both";
    mo.linear_col = q.straight_trend == "columns" || q.straight_trend == "both";
    if ((mo.trend != FieldTrendChoice::off || !q.straight_trend.empty()) &&
        (q.row_position.empty() || q.column_position.empty()))
      return report(q.csv_path, 0, {}, "field trend needs --row-position and --column-position");
    std::vector<MixedAnalysis> done;
    for (const std::string& response : q.responses) {
      auto r = analyse_reml(read.csv.table, roles, response, mo);
      if (!r) return report_problem(r.problem());
      done.push_back(std::move(r).value());
    }
    if (q.json) {
      std::cout << reml_json(done);
    } else {
      for (size_t i = 0; i < done.size(); ++i) std::cout << (i ? "\n" : "") << reml_text(done[i]);
    }
    return 0;
  }
  if (q.field_trend != "off" || !q.straight_trend.empty())
    return report(q.csv_path, 0, {}, "--field-trend and --straight-trend need --method reml");
  const auto results = analyse_all(read.csv.table, roles, q.responses, options);
  std::vector<Analysis> done;
  for (const auto& r : results) {
    if (!r) return report_problem(r.problem());
    done.push_back(*r);
  }
  if (q.json) {
    std::cout << analysis_json(done, names);
  } else {
    for (size_t i = 0; i < done.size(); ++i) std::cout << (i ? "\n" : "") << analysis_text(done[i], names);
  }
  return 0;
}

}  // namespace furrow
