#include "app/print/field_sheet.h"

#include <algorithm>
#include <cstdio>
#include <ctime>

#include "app/print/pdf_pages.h"
#include "app/work/sheet_entry.h"
#include "core/design.h"

namespace furrow {
namespace {

constexpr double kMargin = 12.0;        // every edge: inside what common office printers can print
constexpr double kRowHeight = 7.0;      // room for handwriting (as ruled paper), with a pencil on a clipboard
constexpr double kHeadHeight = 17.0;    // the table head: code, name, unit and range, how written
constexpr double kTopBlock = 18.0;      // trial, site and season, date and observer blanks
constexpr double kFoot = 10.5;          // how to write "no value", and the field cautions
constexpr double kMinValueBox = 18.0;   // narrowest box for a handwritten value
constexpr double kRoomyValueBox = 26.0; // portrait is chosen only with boxes this wide
constexpr double kTextSize = 3.2;       // body text, mm (about 9 pt)

std::string number(double x) {
  char b[32];
  std::snprintf(b, sizeof b, "%g", x);
  return b;
}

// How a trait is written, for the table head.
std::string trait_detail(const Trait& tr) {
  std::string d;
  switch (tr.kind) {
    case TraitKind::decimal:
    case TraitKind::percent: {
      d = tr.kind == TraitKind::percent ? "%" : tr.unit;
      if (tr.decimals > 0) d += std::string(d.empty() ? "" : ", ") + "to 0." + std::string(static_cast<size_t>(tr.decimals - 1), '0') + "1";
      break;
    }
    case TraitKind::count: d = tr.unit.empty() ? "whole number" : tr.unit + ", whole"; break;
    case TraitKind::score: return "score " + std::to_string(tr.scale_min) + "-" + std::to_string(tr.scale_max);
    case TraitKind::category: {
      for (const std::string& c : tr.categories) d += (d.empty() ? "" : " / ") + c;
      return d;
    }
    case TraitKind::date: return "date YYYY-MM-DD";
    case TraitKind::text: return tr.unit.empty() ? "words" : tr.unit;
  }
  if (tr.soft_min || tr.soft_max)
    d += std::string(d.empty() ? "" : "; ") + "usually " + (tr.soft_min ? number(*tr.soft_min) : "") + "-" +
         (tr.soft_max ? number(*tr.soft_max) : "");
  return d;
}

std::string walk_words(const TrialPlan& plan) {
  return plan.walk == WalkOrder::serpentine_rows ? "walk along rows (serpentine)" : "walk along columns (serpentine)";
}

}  // namespace

std::string local_date_today() {
  const std::time_t now = std::time(nullptr);
  std::tm local{};
  localtime_r(&now, &local);
  char b[16];
  std::strftime(b, sizeof b, "%Y-%m-%d", &local);
  return b;
}

Result<SheetPaper> sheet_paper(const std::string& key) {
  if (key == "a4") return SheetPaper{"a4", 210, 297};
  if (key == "letter") return SheetPaper{"letter", 215.9, 279.4};
  return make_problem("no paper '" + key + "' (choose a4 or letter)");
}

Result<FieldSheetLayout> field_sheet_layout(const StoredTrial& t, const SheetPaper& paper, const FieldSheetRequest& r) {
  if (r.traits.empty()) return make_problem("choose at least one trait for the sheet");
  bool repeated = false;
  for (size_t k : r.traits) {
    if (k >= t.plan.traits.size()) return make_problem("no such trait on this trial");
    const Trait& tr = t.plan.traits[k];
    if (r.occasion < 1 || (tr.occasions > 1 && r.occasion > tr.occasions))
      return make_problem(tr.code + " has " + std::to_string(tr.occasions) + " occasions; " +
                          std::to_string(r.occasion) + " is not one of them");
    repeated = repeated || tr.occasions > 1;
  }
  if (r.occasion > 1 && !repeated)
    return make_problem("none of the chosen traits is measured more than once: occasion " + std::to_string(r.occasion) +
                        " is not one of theirs");
  // The fixed columns, then the value boxes and the note sharing what is left.
  using Holds = FieldSheetLayout::Column::Holds;
  std::vector<FieldSheetLayout::Column> fixed;
  // The plot column fits the longest label whole (bold, about 2.7 mm a character).
  size_t longest_label = 4;
  for (const PlannedPlot& p : t.layout.plots) longest_label = std::max(longest_label, p.label.size());
  fixed.push_back({Holds::plot, 0, "plot", "", 0, std::clamp(4.0 + 2.7 * static_cast<double>(longest_label), 20.0, 70.0), false});
  if (!t.plan.sites.empty()) {
    size_t longest = 4;
    for (const std::string& s : t.plan.sites) longest = std::max(longest, s.size());
    fixed.push_back({Holds::site, 0, "site", "", 0, std::clamp(4.0 + 1.8 * static_cast<double>(longest), 14.0, 34.0), false});
  }
  fixed.push_back({Holds::block, 0, "block", "", 0, 12, false});
  fixed.push_back({Holds::row, 0, "row", "", 0, 11, false});
  fixed.push_back({Holds::column, 0, "col", "", 0, 11, false});
  if (!r.blind)
    for (size_t f = 0; f < t.plan.factors.size(); ++f) {
      size_t longest = t.plan.factors[f].name.size();
      for (const std::string& l : t.plan.factors[f].levels) longest = std::max(longest, l.size());
      fixed.push_back({Holds::factor, f, t.plan.factors[f].name, "", 0, std::clamp(4.0 + 1.8 * static_cast<double>(longest), 14.0, 40.0), false});
    }
  double fixed_width = 0;
  for (const auto& c : fixed) fixed_width += c.width_mm;
  const double boxes = static_cast<double>(r.traits.size()) + 1.5;   // the note box is one and a half
  FieldSheetLayout L;
  for (bool landscape : {false, true}) {
    const double w = landscape ? paper.height_mm : paper.width_mm;
    const double box = (w - 2 * kMargin - fixed_width) / boxes;
    // Portrait only while its boxes stay roomy; landscape down to the narrowest.
    if (box >= (landscape ? kMinValueBox : kRoomyValueBox)) {
      L.landscape = landscape;
      L.page_width_mm = w;
      L.page_height_mm = landscape ? paper.width_mm : paper.height_mm;
      double x = kMargin;
      for (auto c : fixed) {
        c.x_mm = x;
        x += c.width_mm;
        L.columns.push_back(c);
      }
      for (size_t k : r.traits) {
        const Trait& tr = t.plan.traits[k];
        const int occasion = tr.occasions > 1 ? r.occasion : 1;
        std::string detail = tr.name;
        if (tr.occasions > 1) detail += ", occasion " + std::to_string(occasion);
        if (const std::string how = trait_detail(tr); !how.empty()) detail += "; " + how;
        L.columns.push_back({Holds::value, 0, sheet_column(tr, occasion), detail, x, box, true});
        x += box;
      }
      L.columns.push_back({Holds::note, 0, "note", "missing: reason", x, box * 1.5, true});
      break;
    }
  }
  if (L.columns.empty()) {
    const double room = paper.height_mm - 2 * kMargin - fixed_width;
    const int fit = std::max(0, static_cast<int>(room / kMinValueBox - 1.5));
    return make_problem(std::to_string(r.traits.size()) + " traits do not fit across one sheet (at most " +
                        std::to_string(fit) + " here); choose fewer with --traits and print a sheet for each group");
  }
  L.table_top_mm = kMargin + kTopBlock;
  L.head_height_mm = kHeadHeight;
  L.row_height_mm = kRowHeight;
  const double body = L.page_height_mm - kMargin - kFoot - (L.table_top_mm + kHeadHeight);
  L.rows_per_page = std::max(1, static_cast<int>(body / kRowHeight));
  const int plots = static_cast<int>(t.layout.plots.size());
  L.pages = std::max(1, (plots + L.rows_per_page - 1) / L.rows_per_page);
  return L;
}

Result<FieldSheetLayout> write_field_sheet(const StoredTrial& t, const SheetPaper& paper, const FieldSheetRequest& r,
                                           const std::string& out_path) {
  auto layout = field_sheet_layout(t, paper, r);
  if (!layout) return layout.problem();
  const FieldSheetLayout& L = *layout;
  PdfPages pdf(out_path, L.page_width_mm, L.page_height_mm, "Field sheet: " + t.plan.name);
  if (auto st = pdf.status(); !st) return st.problem();
  const double left = kMargin, right = L.page_width_mm - kMargin, width = right - left;
  const auto& plots = t.layout.plots;   // in walk order
  for (int page = 0; page < L.pages; ++page) {
    if (page > 0) pdf.next_page();
    // Top: the trial, where and when, and blanks for the day.
    double y = kMargin + 5.5;
    const std::string pages = "page " + std::to_string(page + 1) + " of " + std::to_string(L.pages);
    const double pages_w = pdf.text_width(pages, 4.0, true);
    pdf.text(t.plan.name, left, y, 5.0, width - pages_w - 6, true);
    pdf.text(pages, right - pages_w, y, 4.0, pages_w + 1, true);
    y += 6.0;
    std::string where;
    for (std::string part : {t.plan.site + (t.plan.season.empty() ? "" : (t.plan.site.empty() ? "season " : ", season ") + t.plan.season),
                             std::string(design_kind_title(t.plan.design)), walk_words(t.plan)})
      if (!part.empty()) where += (where.empty() ? "" : "; ") + part;
    if (std::any_of(r.traits.begin(), r.traits.end(), [&](size_t k) { return t.plan.traits[k].occasions > 1; }))
      where += "; occasion " + std::to_string(r.occasion);
    pdf.text(where, left, y, kTextSize, width);
    y += 5.0;
    pdf.text("printed " + r.printed_on, left, y, kTextSize, 45);
    pdf.text("date walked", left + 48, y, kTextSize, 30);
    pdf.line(left + 70, y + 0.8, left + 110, y + 0.8, 0.25);
    pdf.text("observer", left + 116, y, kTextSize, 20);
    pdf.line(left + 132, y + 0.8, std::min(right, left + 200), y + 0.8, 0.25);
    // The table head: each column's title; a value box's code is its CSV column.
    const double top = L.table_top_mm;
    pdf.fill_rectangle(left, top, width, L.head_height_mm, 0.88);
    for (const auto& c : L.columns) {
      const double room = c.width_mm - 2.4;
      // A value box's code is its CSV column: always whole, smaller if it must be.
      double size = c.value_box ? 3.6 : kTextSize;
      while (c.value_box && size > 1.8 && pdf.text_width(c.title, size, true) > room) size *= 0.93;
      pdf.text(c.title, c.x_mm + 1.2, top + 4.6, size, room, c.value_box);
      // The detail, one line per "; " part (at most three).
      double y_detail = top + 8.6;
      size_t from = 0;
      for (int k = 0; k < 3 && from < c.detail.size(); ++k, y_detail += 3.3) {
        const size_t cut = k == 2 ? std::string::npos : c.detail.find("; ", from);
        pdf.text(c.detail.substr(from, cut == std::string::npos ? std::string::npos : cut - from), c.x_mm + 1.2,
                 y_detail, 2.6, room);
        from = cut == std::string::npos ? c.detail.size() : cut + 2;
      }
    }
    // The plots of this page.
    const int first = page * L.rows_per_page;
    const int last = std::min(static_cast<int>(plots.size()), first + L.rows_per_page);
    double row_top = top + L.head_height_mm;
    for (int i = first; i < last; ++i, row_top += L.row_height_mm) {
      const PlannedPlot& p = plots[static_cast<size_t>(i)];
      const double base = row_top + L.row_height_mm * 0.68;
      for (const auto& c : L.columns) {
        std::string text;
        switch (c.holds) {
          case FieldSheetLayout::Column::Holds::plot: text = p.label; break;
          case FieldSheetLayout::Column::Holds::site: text = t.plan.sites[static_cast<size_t>(p.site)]; break;
          case FieldSheetLayout::Column::Holds::block: text = std::to_string(p.block); break;
          case FieldSheetLayout::Column::Holds::row: text = std::to_string(p.row); break;
          case FieldSheetLayout::Column::Holds::column: text = std::to_string(p.column); break;
          case FieldSheetLayout::Column::Holds::factor:
            if (c.factor < p.levels.size()) text = t.plan.factors[c.factor].levels[static_cast<size_t>(p.levels[c.factor])];
            break;
          case FieldSheetLayout::Column::Holds::value:
          case FieldSheetLayout::Column::Holds::note: continue;   // left empty for the crew
        }
        const bool plot = c.holds == FieldSheetLayout::Column::Holds::plot;
        double size = plot ? 4.2 : kTextSize;
        // The plot label is never cut: smaller type first, refused if even that is too wide.
        while (plot && size > 2.2 && pdf.text_width(text, size, true) > c.width_mm - 2.4) size = std::max(2.2, size * 0.92);
        if (plot && pdf.text_width(text, size, true) > c.width_mm - 2.4)
          return pdf.finish("plot label '" + text + "' is too long to print whole on the sheet").problem();
        pdf.text(text, c.x_mm + 1.2, base, size, c.width_mm - 2.4, plot);
      }
      // A heavier rule where a new block (or site) starts: the crew keeps its place.
      const bool new_block = i > first && (plots[static_cast<size_t>(i - 1)].block != p.block ||
                                           plots[static_cast<size_t>(i - 1)].site != p.site);
      pdf.line(left, row_top, right, row_top, new_block ? 0.7 : 0.2);
    }
    const double bottom = row_top;
    pdf.rectangle(left, top, width, bottom - top, 0.35);
    pdf.line(left, top + L.head_height_mm, right, top + L.head_height_mm, 0.5);
    for (size_t k = 1; k < L.columns.size(); ++k)
      pdf.line(L.columns[k].x_mm, top, L.columns[k].x_mm, bottom, L.columns[k].value_box ? 0.35 : 0.15);
    // Foot: how to type it back, and the field cautions.
    const double foot = L.page_height_mm - kMargin - 0.5;
    pdf.text("No value: write \"missing:\" and the reason in the box. Typed back: one CSV line per plot, columns as "
             "headed (furrow record --from-sheet).",
             left, foot - 7.0, 2.6, width);
    pdf.text("Treated plots: keep to the re-entry interval on the product label and your local rules.", left, foot - 3.5,
             2.6, width);
    pdf.text("Heat, sun and machinery: follow your station's safety practice.", left, foot, 2.6, width);
  }
  if (auto st = pdf.finish(); !st) return st.problem();
  return layout;
}

}  // namespace furrow
