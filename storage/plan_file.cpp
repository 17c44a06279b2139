#include "storage/plan_file.h"

#include <cstdlib>

#include <algorithm>
#include <cmath>
#include <map>
#include <set>
#include <sstream>

#include "core/exact_decimal.h"
#include "storage/csv_table.h"

namespace furrow {
namespace {

Problem at(int line, const std::string& field, const std::string& message) {
  return make_problem(message, field, line);
}

std::string trim(const std::string& s) {
  size_t b = 0, e = s.size();
  while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
  return s.substr(b, e - b);
}

// Whole numbers: digits only, within [lo, hi].
bool parse_int(const std::string& s, long long lo, long long hi, long long* out) {
  if (s.empty() || s.size() > 18) return false;
  for (char c : s) if (!std::isdigit(static_cast<unsigned char>(c))) return false;
  *out = std::stoll(s);
  return *out >= lo && *out <= hi;
}

// "a|b|c" into distinct, non-empty items; false when an item is empty or repeated.
bool split_choices(const std::string& text, std::vector<std::string>* out) {
  std::string cur;
  std::set<std::string> seen;
  for (size_t c = 0; c <= text.size(); ++c) {
    if (c == text.size() || text[c] == '|') {
      const std::string item = trim(cur);
      if (item.empty() || !seen.insert(item).second) return false;
      out->push_back(item);
      cur.clear();
    } else {
      cur += text[c];
    }
  }
  return true;
}

bool parse_number(const std::string& s, double* out) {
  if (!parse_exact_decimal(s).ok()) return false;
  *out = std::strtod(s.c_str(), nullptr);
  return std::isfinite(*out);
}

}  // namespace

std::string csv_field(const std::string& raw) {
  // A text cell a spreadsheet would run as a formula (=, +, -, @, or a tab or
  // carriage return first; OWASP's advice on CSV injection) gets a leading
  // apostrophe; numbers such as -5 stay as they are.
  std::string s = raw;
  if (!s.empty() && std::string("=+-@\t\r").find(s.front()) != std::string::npos) {
    char* end = nullptr;
    std::strtod(s.c_str(), &end);
    const bool number = end && *end == '\0' && s.size() > 1;
    if (!number) s = "'" + s;
  }
  if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
  std::string q = "\"";
  for (char c : s) { if (c == '"') q += '"'; q += c; }
  return q + "\"";
}

namespace {
// The field sheet's own columns (app/work/sheet_entry.h), compared without case.
constexpr const char* kSheetColumnWords = "plot, label, site, block, field_row, field_column, row, col, column, note";
bool is_sheet_column_name(const std::string& name) {
  std::string l;
  for (char c : name) l += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  for (const char* w : {"plot", "label", "site", "block", "field_row", "field_column", "row", "col", "column", "note"})
    if (l == w) return true;
  return false;
}
}  // namespace

Result<PlanFile> read_plan_file(const std::string& path) { return plan_from_records(read_csv_records(path)); }

Result<PlanFile> parse_plan_text(const std::string& text) { return plan_from_records(parse_csv_records(text)); }

Result<PlanFile> plan_from_records(const CsvRecords& rec) {
  if (!rec.ok) return at(rec.problem.line, rec.problem.column, rec.problem.message);
  if (rec.rows.empty()) return at(1, "", "the plan file is empty");
  const auto& first = rec.rows.front();
  if (first.fields.size() < 2 || trim(first.fields[0]) != "furrow-plan" || trim(first.fields[1]) != "1")
    return at(first.line, "", "the first line must be 'furrow-plan,1'");
  PlanFile out;
  TrialPlan& p = out.plan;
  std::set<std::string> settings_seen;
  bool have_design = false;
  std::vector<CsvRecord> plot_rows;
  std::map<std::string, int> trait_line;   // trait code -> its line
  for (size_t i = 1; i < rec.rows.size(); ++i) {
    const CsvRecord& r = rec.rows[i];
    std::vector<std::string> f;
    for (const auto& x : r.fields) f.push_back(trim(x));
    // Names and labels are printed on stakes and sheets and typed back:
    // no control characters (a tab or an escape cannot be written on paper).
    for (size_t k = 0; k < f.size(); ++k)
      if (std::any_of(f[k].begin(), f[k].end(), [](char c) { return static_cast<unsigned char>(c) < 0x20 || c == 0x7F; }))
        return at(r.line, "", "field " + std::to_string(k + 1) + " holds a control character (a tab, line break or "
                                                                 "escape); names and labels are plain text");
    const std::string& kind = f[0];
    if (kind == "setting") {
      if (f.size() != 3) return at(r.line, "setting", "a setting line has exactly a key and a value");
      const std::string& key = f[1];
      const std::string& v = f[2];
      if (!settings_seen.insert(key).second) return at(r.line, key, "setting '" + key + "' is given twice");
      long long n = 0;
      double d = 0;
      if (key == "name") p.name = v;
      else if (key == "site") p.site = v;
      else if (key == "season") p.season = v;
      else if (key == "design") {
        const auto k = parse_design_kind(v);
        if (!k) return at(r.line, key, "unknown design '" + v + "'; use crd, rcbd, latin, factorial or split-plot");
        p.design = *k;
        have_design = true;
      } else if (key == "replicates") {
        if (!parse_int(v, 1, 1000, &n)) return at(r.line, key, "replicates must be a whole number from 1 to 1000");
        p.replicates = static_cast<int>(n);
      } else if (key == "rows" || key == "columns") {
        if (!parse_int(v, 1, 10000, &n)) return at(r.line, key, key + " must be a whole number from 1 to 10000");
        (key == "rows" ? p.rows : p.columns) = static_cast<int>(n);
      } else if (key == "plot_length_m" || key == "plot_width_m") {
        if (!parse_number(v, &d) || d <= 0 || d > 1000) return at(r.line, key, key + " must be a length in metres");
        (key == "plot_length_m" ? p.plot_length_m : p.plot_width_m) = d;
      } else if (key == "block_shape") {
        if (v == "row-strips") p.block_shape = BlockShape::row_strips;
        else if (v == "column-strips") p.block_shape = BlockShape::column_strips;
        else if (v == "rectangles") p.block_shape = BlockShape::rectangles;
        else return at(r.line, key, "block_shape is row-strips, column-strips or rectangles");
      } else if (key == "block_size") {
        const auto x = v.find('x');
        long long a = 0, b = 0;
        if (x == std::string::npos || !parse_int(v.substr(0, x), 1, 10000, &a) || !parse_int(v.substr(x + 1), 1, 10000, &b))
          return at(r.line, key, "block_size is ROWSxCOLUMNS, for example 2x10");
        p.block_rows = static_cast<int>(a);
        p.block_columns = static_cast<int>(b);
      } else if (key == "sites") {
        if (!split_choices(v, &p.sites))
          return at(r.line, key, "site names must be distinct and not empty, separated by |");
      } else if (key == "walk") {
        if (v == "serpentine-rows") p.walk = WalkOrder::serpentine_rows;
        else if (v == "serpentine-columns") p.walk = WalkOrder::serpentine_columns;
        else return at(r.line, key, "walk is serpentine-rows or serpentine-columns");
      } else if (key == "seed") {
        if (v.empty() || v.size() > 20 || v.find_first_not_of("0123456789") != std::string::npos)
          return at(r.line, key, "seed must be a whole number");
        try {
          p.seed = std::stoull(v);
        } catch (...) {
          return at(r.line, key, "seed must be below 2^64");
        }
      } else {
        return at(r.line, key, "unknown setting '" + key + "'");
      }
    } else if (kind == "factor") {
      if (f.size() < 4) return at(r.line, "factor", "a factor line has a name and at least two levels");
      TreatmentFactor tf{f[1], {f.begin() + 2, f.end()}};
      if (tf.name.empty()) return at(r.line, "factor", "the factor has no name");
      if (is_sheet_column_name(tf.name))
        return at(r.line, tf.name, "'" + tf.name + "' names a column of the field sheet (" + kSheetColumnWords +
                                       "); give the factor another name");
      std::set<std::string> seen;
      for (const auto& l : tf.levels)
        if (l.empty() || !seen.insert(l).second)
          return at(r.line, tf.name, "level '" + l + "' of factor '" + tf.name + "' is empty or repeated");
      for (const auto& other : p.factors)
        if (other.name == tf.name) return at(r.line, tf.name, "factor '" + tf.name + "' is given twice");
      p.factors.push_back(std::move(tf));
    } else if (kind == "trait") {
      if (f.size() != 13) return at(r.line, "trait", "a trait line has 12 fields after 'trait' (see the format)");
      Trait t;
      t.code = f[1];
      t.name = f[2];
      t.unit = f[3];
      if (t.code.empty() || t.code.find_first_of(" ,") != std::string::npos)
        return at(r.line, "code", "a trait code is a short word without spaces or commas");
      if (t.name.empty()) return at(r.line, "name", "trait '" + t.code + "' has no name");
      if (is_sheet_column_name(t.code))
        return at(r.line, "code", "'" + t.code + "' names a column of the field sheet (" + kSheetColumnWords +
                                      "); give the trait another code");
      trait_line[t.code] = r.line;
      for (const auto& other : p.traits)
        if (other.code == t.code) return at(r.line, "code", "trait code '" + t.code + "' is given twice");
      const auto k = parse_trait_kind(f[4]);
      if (!k) return at(r.line, "kind", "unknown trait kind '" + f[4] + "'");
      t.kind = *k;
      long long n = 0;
      if (!f[5].empty() && !parse_int(f[5], 0, 9, &n)) return at(r.line, "decimals", "decimals is a whole number 0-9");
      t.decimals = static_cast<int>(n);
      const char* names[] = {"hard_min", "hard_max", "soft_min", "soft_max"};
      std::optional<double>* slots[] = {&t.hard_min, &t.hard_max, &t.soft_min, &t.soft_max};
      for (int j = 0; j < 4; ++j) {
        if (f[6 + j].empty()) continue;
        double d = 0;
        if (!parse_number(f[6 + j], &d)) return at(r.line, names[j], "'" + f[6 + j] + "' is not a number");
        *slots[j] = d;
      }
      if (t.hard_min && t.hard_max && *t.hard_min > *t.hard_max) return at(r.line, "hard_min", "hard_min is above hard_max");
      if (t.soft_min && t.soft_max && *t.soft_min > *t.soft_max) return at(r.line, "soft_min", "soft_min is above soft_max");
      if (f[10] == "yes") t.required = true;
      else if (f[10] == "no") t.required = false;
      else return at(r.line, "required", "required is yes or no");
      if (!parse_int(f[11], 1, 100, &n)) return at(r.line, "occasions", "occasions is a whole number from 1 to 100");
      t.occasions = static_cast<int>(n);
      const std::string& choices = f[12];
      if (t.kind == TraitKind::score) {
        const auto dash = choices.find('-');
        long long lo = 0, hi = 0;
        if (dash == std::string::npos || !parse_int(choices.substr(0, dash), 0, 1000, &lo) ||
            !parse_int(choices.substr(dash + 1), 0, 1000, &hi) || lo >= hi)
          return at(r.line, "choices", "a score needs its scale as LOW-HIGH, for example 1-9");
        t.scale_min = static_cast<int>(lo);
        t.scale_max = static_cast<int>(hi);
      } else if (t.kind == TraitKind::category) {
        if (!split_choices(choices, &t.categories))
          return at(r.line, "choices", "categories must be distinct and not empty, separated by |");
        if (t.categories.size() < 2) return at(r.line, "choices", "a category trait needs at least two categories");
      }
      p.traits.push_back(std::move(t));
    } else if (kind == "plot") {
      plot_rows.push_back(r);
    } else if (kind.empty() && f.size() == 1) {
      continue;
    } else {
      return at(r.line, "", "unknown line kind '" + kind + "'; expected setting, factor, trait or plot");
    }
  }
  const int last_line = rec.rows.back().line;
  // Sheet columns are codes, and CODE_N for occasion N of a repeated trait:
  // no two may read alike, and no factor may be called as a trait.
  for (const Trait& t : p.traits) {
    for (const TreatmentFactor& f : p.factors)
      if (f.name == t.code)
        return at(trait_line[t.code], "code", "trait code '" + t.code + "' is also a treatment factor's name");
    if (t.occasions > 1)
      for (int n = 1; n <= t.occasions; ++n)
        if (trait_line.count(t.code + "_" + std::to_string(n)))
          return at(trait_line[t.code + "_" + std::to_string(n)], "code",
                    "trait code '" + t.code + "_" + std::to_string(n) + "' reads like occasion " + std::to_string(n) +
                        " of trait '" + t.code + "' on the field sheet; give it another code");
  }
  if (!have_design) return at(last_line, "design", "the plan has no 'setting,design,...' line");
  if (p.name.empty()) return at(last_line, "name", "the plan has no 'setting,name,...' line");
  if (p.factors.empty()) return at(last_line, "factor", "the plan has no treatment factor");
  if (p.traits.empty()) return at(last_line, "trait", "the plan has no trait");
  if ((p.design == DesignKind::multi_site) != !p.sites.empty())
    return at(last_line, "sites", p.sites.empty() ? "a several-sites plan needs 'setting,sites,A|B|...'"
                                                  : "only a several-sites plan (design multi-site) lists sites");
  if (!plot_rows.empty()) {
    Layout layout;
    std::set<std::string> labels;
    std::set<std::pair<int, int>> cells;
    for (const CsvRecord& r : plot_rows) {
      std::vector<std::string> f;
      for (const auto& x : r.fields) f.push_back(trim(x));
      const size_t site_field = p.sites.empty() ? 0 : 1;
      if (f.size() != 5 + site_field + p.factors.size())
        return at(r.line, "plot", std::string("a plot line has label, ") + (site_field ? "site, " : "") +
                                      "block, row, column and one level per factor (" +
                                      std::to_string(p.factors.size()) + ")");
      PlannedPlot plot;
      plot.label = f[1];
      if (site_field) {
        const auto it = std::find(p.sites.begin(), p.sites.end(), f[2]);
        if (it == p.sites.end()) return at(r.line, "site", "'" + f[2] + "' is not one of the plan's sites");
        plot.site = static_cast<int>(it - p.sites.begin());
        f.erase(f.begin() + 2);
      }
      if (plot.label.empty()) return at(r.line, "label", "the plot has no label");
      if (!labels.insert(plot.label).second) return at(r.line, "label", "plot label '" + plot.label + "' is used twice");
      long long b = 0, row = 0, col = 0;
      if (!parse_int(f[2], 0, 1000, &b)) return at(r.line, "block", "block is a whole number (0 for none)");
      if (!parse_int(f[3], 1, p.rows, &row)) return at(r.line, "row", "row must lie in the grid's 1-" + std::to_string(p.rows));
      if (!parse_int(f[4], 1, p.columns, &col))
        return at(r.line, "column", "column must lie in the grid's 1-" + std::to_string(p.columns));
      if (!cells.insert({plot.site * 100000 + static_cast<int>(row), static_cast<int>(col)}).second)
        return at(r.line, "row", "two plots are at row " + f[3] + ", column " + f[4]);
      plot.block = static_cast<int>(b);
      plot.row = static_cast<int>(row);
      plot.column = static_cast<int>(col);
      for (size_t k = 0; k < p.factors.size(); ++k) {
        const auto& lv = p.factors[k].levels;
        const auto it = std::find(lv.begin(), lv.end(), f[5 + k]);
        if (it == lv.end())
          return at(r.line, p.factors[k].name, "'" + f[5 + k] + "' is not a level of factor '" + p.factors[k].name + "'");
        plot.levels.push_back(static_cast<int>(it - lv.begin()));
      }
      layout.plots.push_back(std::move(plot));
    }
    // Walking order from the plan's walk setting.
    for (PlannedPlot& plot : layout.plots) {
      if (p.walk == WalkOrder::serpentine_rows)
        plot.walk_order = (plot.row - 1) * p.columns + (plot.row % 2 ? plot.column : p.columns - plot.column + 1);
      else
        plot.walk_order = (plot.column - 1) * p.rows + (plot.column % 2 ? plot.row : p.rows - plot.row + 1);
      plot.walk_order += plot.site * p.rows * p.columns;
    }
    std::sort(layout.plots.begin(), layout.plots.end(),
              [](const PlannedPlot& a, const PlannedPlot& b) { return a.walk_order < b.walk_order; });
    out.layout = std::move(layout);
  }
  return out;
}

std::string site_of(const StoredTrial& t, const PlannedPlot& p) {
  return t.plan.sites.empty() ? std::string() : t.plan.sites[p.site];
}

std::string layout_csv(const StoredTrial& t) {
  std::ostringstream o;
  o << "label,site,block,field_row,field_column,walk_order";
  for (const auto& f : t.plan.factors) o << "," << csv_field(f.name);
  o << "\n";
  for (const PlannedPlot& p : t.layout.plots) {
    o << csv_field(p.label) << "," << csv_field(site_of(t, p)) << "," << p.block << "," << p.row << "," << p.column
      << "," << p.walk_order;
    for (size_t k = 0; k < p.levels.size(); ++k) o << "," << csv_field(t.plan.factors[k].levels[p.levels[k]]);
    o << "\n";
  }
  return o.str();
}

namespace {
struct Index {
  std::map<std::int64_t, size_t> plot;
  std::map<std::int64_t, size_t> trait;
  explicit Index(const StoredTrial& t) {
    for (size_t i = 0; i < t.plot_ids.size(); ++i) plot[t.plot_ids[i]] = i;
    for (size_t i = 0; i < t.trait_ids.size(); ++i) trait[t.trait_ids[i]] = i;
  }
};
}  // namespace

std::string long_data_csv(const StoredTrial& t, const std::vector<LiveObservation>& live,
                          const std::set<std::string>& revoked_devices) {
  const Index ix(t);
  std::ostringstream o;
  o << "label,site,block,field_row,field_column";
  for (const auto& f : t.plan.factors) o << "," << csv_field(f.name);
  o << ",trait,occasion,value,missing_reason,note,confirmed_checks,observer,recorded_at,device,sequence,device_revoked\n";
  for (const LiveObservation& x : live) {
    const PlannedPlot& p = t.layout.plots[ix.plot.at(x.plot_id)];
    o << csv_field(p.label) << "," << csv_field(site_of(t, p)) << "," << p.block << "," << p.row << "," << p.column;
    for (size_t k = 0; k < p.levels.size(); ++k) o << "," << csv_field(t.plan.factors[k].levels[p.levels[k]]);
    o << "," << csv_field(t.plan.traits[ix.trait.at(x.trait_id)].code) << "," << x.occasion << ","
      << csv_field(x.value.value_or("")) << "," << csv_field(x.missing_reason.value_or("")) << "," << csv_field(x.note)
      << "," << csv_field(x.confirmed_checks) << "," << csv_field(x.observer) << "," << x.recorded_at << "," << x.key.device_id << "," << x.key.sequence << ","
      << (revoked_devices.count(x.key.device_id) ? "yes" : "") << "\n";
  }
  return o.str();
}

std::string wide_data_csv(const StoredTrial& t, const std::vector<LiveObservation>& live) {
  const Index ix(t);
  // cell -> distinct live values
  // (agreeing values keyed by their identity: 5.5 and 5.50 are one value)
  std::map<std::tuple<size_t, size_t, int>, std::map<std::string, std::pair<std::string, std::string>>> cells;
  for (const LiveObservation& x : live)
    cells[{ix.plot.at(x.plot_id), ix.trait.at(x.trait_id), x.occasion}].emplace(
        value_identity(x), std::pair{x.value.value_or(""), x.missing_reason.value_or("")});
  std::ostringstream o;
  o << "label,site,block,field_row,field_column";
  for (const auto& f : t.plan.factors) o << "," << csv_field(f.name);
  for (const Trait& tr : t.plan.traits)
    for (int occ = 1; occ <= tr.occasions; ++occ) {
      const std::string name = tr.occasions > 1 ? tr.code + "_" + std::to_string(occ) : tr.code;
      o << "," << csv_field(name) << "," << csv_field(name + "_reason");
    }
  o << "\n";
  for (size_t i = 0; i < t.layout.plots.size(); ++i) {
    const PlannedPlot& p = t.layout.plots[i];
    o << csv_field(p.label) << "," << csv_field(site_of(t, p)) << "," << p.block << "," << p.row << "," << p.column;
    for (size_t k = 0; k < p.levels.size(); ++k) o << "," << csv_field(t.plan.factors[k].levels[p.levels[k]]);
    for (size_t tr = 0; tr < t.plan.traits.size(); ++tr)
      for (int occ = 1; occ <= t.plan.traits[tr].occasions; ++occ) {
        const auto it = cells.find({i, tr, occ});
        if (it == cells.end()) o << ",,";
        else if (it->second.size() > 1) o << ",,CONFLICT";
        else
          o << "," << csv_field(it->second.begin()->second.first) << "," << csv_field(it->second.begin()->second.second);
      }
    o << "\n";
  }
  return o.str();
}

}  // namespace furrow
