#include "app/field/screens/check_screen.h"

#include <imgui.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "app/work/number_text.h"
#include "app/field/screens/widgets.h"
#include "app/work/glossary.h"

namespace furrow {
namespace {

ImU32 colour(const Rgb& c, float alpha = 1.0f) {
  ImVec4 v = to_imgui(c);
  v.w = alpha;
  return ImGui::ColorConvertFloat4ToU32(v);
}

void heading(const char* text) {
  ImGui::Spacing();
  ImGui::PushFont(ImGui::GetIO().Fonts->Fonts.size() > 1 ? ImGui::GetIO().Fonts->Fonts[1] : ImGui::GetFont());
  ImGui::TextUnformatted(text);
  ImGui::PopFont();
}

// A frame for a chart: the plotting rectangle inside room for axis labels.
struct Chart {
  ImVec2 a, b;            // plotting area in screen pixels
  double y_lo = 0, y_hi = 1, x_lo = 0, x_hi = 1;
  float y(double v) const { return b.y - static_cast<float>((v - y_lo) / (y_hi - y_lo)) * (b.y - a.y); }
  float x(double v) const { return a.x + static_cast<float>((v - x_lo) / (x_hi - x_lo)) * (b.x - a.x); }
};

void widen(double* lo, double* hi) {
  if (*hi <= *lo) { *lo -= 1; *hi += 1; }
  const double pad = (*hi - *lo) * 0.06;
  *lo -= pad;
  *hi += pad;
}

Chart begin_chart(const char* title, double y_lo, double y_hi, float height, const Theme& t, float scale) {
  ImGui::TextUnformatted(title);
  const float label_w = ImGui::CalcTextSize("-0000.00").x + 8 * scale;
  const ImVec2 at = ImGui::GetCursorScreenPos();
  const float width = ImGui::GetContentRegionAvail().x;
  ImGui::Dummy(ImVec2(width, height));
  Chart c;
  c.a = ImVec2(at.x + label_w, at.y + 6 * scale);
  c.b = ImVec2(at.x + width - 8 * scale, at.y + height - ImGui::GetTextLineHeight() - 8 * scale);
  widen(&y_lo, &y_hi);
  c.y_lo = y_lo;
  c.y_hi = y_hi;
  ImDrawList* dl = ImGui::GetWindowDrawList();
  dl->AddRectFilled(c.a, c.b, colour(t.background));
  dl->AddRect(c.a, c.b, colour(t.muted_text));
  for (int k = 0; k <= 4; ++k) {
    const double v = y_lo + (y_hi - y_lo) * k / 4.0;
    const float yy = c.y(v);
    dl->AddLine(ImVec2(c.a.x, yy), ImVec2(c.b.x, yy), colour(t.muted_text, 0.25f));
    const std::string s = table_number(v, 4);
    const float w = ImGui::CalcTextSize(s.c_str()).x;
    dl->AddText(ImVec2(c.a.x - w - 4 * scale, yy - ImGui::GetTextLineHeight() / 2), colour(t.text), s.c_str());
  }
  return c;
}

// The mixed-model check: one line when it agrees, else why it differs and
// its components, tests, means and field trend.
void draw_reml(const RemlView& v, const std::string& unit_suffix, int digits, const Theme& t, float scale,
               CheckScreenState* st) {
  const float h = touch_px(scale);
  const ImGuiTableFlags tf = ImGuiTableFlags_Borders | ImGuiTableFlags_RowBg | ImGuiTableFlags_SizingStretchProp;
  if (!v.analysis) {
    if (v.on_request) {
      heading("Mixed-model check (REML)");
      ImGui::TextWrapped("It is right where plots, main plots or entries at a site are missing, and tests for field "
                         "trend. On a trial this size it takes some seconds.");
      const char* label = "Run the mixed-model check";
      if (solid_button(label, ImVec2(button_width(label, scale), h), ButtonLook{t.button, t.button_text}, &st->targets,
                       "run reml"))
        st->reml_requested = true;
    } else if (!v.problem.empty()) {
      ImGui::TextWrapped("Mixed-model check (REML) not available: %s", v.problem.c_str());
    }
    return;
  }
  const MixedAnalysis& r = *v.analysis;
  if (r.differs_because.empty()) {
    std::string line = "Mixed-model check (REML): the same answer; the analysis of variance is exact for these data.";
    if (r.trend)
      line += " Field trend tested and not kept (likelihood-ratio P " + p_text(r.trend->p) + ").";
    ImGui::TextWrapped("%s", line.c_str());
    return;
  }
  heading("Mixed-model check (REML): it differs from the analysis of variance");
  for (const std::string& why : r.differs_because) ImGui::TextWrapped("- Because %s.", why.c_str());
  ImGui::TextWrapped("Where they differ, the REML figures below are the better guide for checking the data.");
  if (ImGui::BeginTable("reml_components", 3, tf)) {
    for (const char* c : {"Variance component", "Estimate", "SE"}) ImGui::TableSetupColumn(c);
    ImGui::TableHeadersRow();
    for (const ComponentEstimate& c : r.components) {
      ImGui::TableNextRow();
      const std::string cells[3] = {c.source + (c.correlation ? " (autocorrelation)" : ""), table_number(c.variance, 4),
                                    c.at_bound ? "held at bound" : table_number(c.se, 3)};
      for (int k = 0; k < 3; ++k) {
        ImGui::TableSetColumnIndex(k);
        ImGui::TextUnformatted(cells[k].c_str());
      }
    }
    ImGui::EndTable();
  }
  if (ImGui::BeginTable("reml_tests", 5, tf)) {
    for (const char* c : {term::kTerm, "DF", "Denominator DF", "F", "P"}) ImGui::TableSetupColumn(c);
    ImGui::TableHeadersRow();
    for (const MixedTermTest& x : r.tests) {
      ImGui::TableNextRow();
      const std::string cells[5] = {x.source, x.estimable ? df_text(x.num_df) : term::kNotEstimable,
                                    x.estimable ? table_number(x.den_df, 3) : "", x.estimable ? table_number(x.f, 4) : "",
                                    x.estimable ? p_text(x.p) : ""};
      for (int k = 0; k < 5; ++k) {
        ImGui::TableSetColumnIndex(k);
        ImGui::TextUnformatted(cells[k].c_str());
      }
    }
    ImGui::EndTable();
  }
  for (const TermMeans& m : r.means) {
    ImGui::TextWrapped("Predicted means of %s (REML), highest first:", m.term.c_str());
    std::vector<const MeanRow*> rows;
    for (const MeanRow& x : m.levels) rows.push_back(&x);
    std::stable_sort(rows.begin(), rows.end(), [](const MeanRow* x, const MeanRow* y) {
      if (x->estimable != y->estimable) return x->estimable;
      return x->mean > y->mean;
    });
    if (ImGui::BeginTable(("reml_means" + m.term).c_str(), 4, tf)) {
      for (const char* c : {m.term.c_str(), term::kMean, term::kSe, term::kLsdGroup}) ImGui::TableSetupColumn(c);
      ImGui::TableHeadersRow();
      for (const MeanRow* x : rows) {
        ImGui::TableNextRow();
        const std::string cells[4] = {x->label, x->estimable ? table_number(x->mean, digits) : term::kNotEstimable,
                                      x->estimable ? table_number(x->se, 3) : "-", x->group_lsd};
        for (int k = 0; k < 4; ++k) {
          ImGui::TableSetColumnIndex(k);
          ImGui::TextUnformatted(cells[k].c_str());
        }
      }
      ImGui::EndTable();
    }
    std::string line = "SE of a difference " + table_number(m.sed, 3) + unit_suffix + ", LSD " + table_number(m.lsd, 4) +
                       unit_suffix + " on " + table_number(m.error_df, 3) + " DF (Satterthwaite).";
    if (!m.note.empty()) line += " " + m.note + ".";
    ImGui::TextWrapped("%s", line.c_str());
  }
  if (r.heritability) ImGui::TextWrapped("Heritability (Cullis, Smith & Coombes 2006): %s", table_number(*r.heritability, 3).c_str());
  if (r.trend) {
    const FieldTrendFit& f = *r.trend;
    ImGui::TextWrapped("Field trend (rows and columns correlated): %s, likelihood-ratio P %s; autocorrelation down rows "
                       "%s, across columns %s. The Field map's \"Field trend\" colouring draws it.",
                       f.chosen ? "kept" : "not kept", p_text(f.p).c_str(), table_number(f.rho_row, 2).c_str(),
                       table_number(f.rho_col, 2).c_str());
  }
  for (const std::string& n : r.notes) ImGui::TextWrapped("note: %s", n.c_str());
}

}  // namespace

std::optional<CheckAction> draw_check_screen(const StoredTrial& trial, const Analysis* a, const std::string& problem,
                                             const std::string& trait_title, const std::string& unit,
                                             const std::vector<EveryTraitOutlier>& every_trait, const Theme& t,
                                             float scale, float top_px, CheckScreenState* st, const RemlView& reml) {
  st->targets.clear();
  std::optional<CheckAction> action;
  const ScreenWindow window("Check", t, top_px,
                            {{ImGuiCol_TableHeaderBg, t.panel},
                             {ImGuiCol_TableRowBgAlt, t.panel},
                             {ImGuiCol_TableBorderStrong, t.muted_text},
                             {ImGuiCol_TableBorderLight, t.muted_text}});
  drag_to_scroll(scale);
  const float h = touch_px(scale);
  const ButtonLook plain{t.button, t.button_text};
  banner(kInterimCaution, t.confirm, t.confirm_text);
  if (solid_button("<##trait", ImVec2(button_width("<", scale), h), plain, &st->targets, "previous trait"))
    action = CheckAction{CheckAction::Kind::previous_trait, 0};
  flow_next(ImGui::CalcTextSize(trait_title.c_str()).x);
  ImGui::SetCursorPosY(ImGui::GetCursorPosY() + (h - ImGui::GetTextLineHeight()) / 2);
  ImGui::TextUnformatted(trait_title.c_str());
  flow_next(button_width(">", scale));
  ImGui::SetCursorPosY(ImGui::GetCursorPosY() - (h - ImGui::GetTextLineHeight()) / 2);
  if (solid_button(">##trait", ImVec2(button_width(">", scale), h), plain, &st->targets, "next trait"))
    action = CheckAction{CheckAction::Kind::next_trait, 0};
  // A bordered button that turns a view on and off (accent when on).
  const auto toggle = [&](bool* on, const char* when_on, const char* when_off, const char* target) {
    const char* label = *on ? when_on : when_off;
    flow_next(button_width(label, scale));
    ButtonLook look{*on ? t.accent : t.background, *on ? t.accent_text : t.text};
    look.border_px = 2.0f * scale;
    look.border = t.text;
    if (solid_button(label, ImVec2(button_width(label, scale), h), look, &st->targets, target)) *on = !*on;
  };
  // The supervisor's view: outlier plots of every trait.
  toggle(&st->every_trait_outliers, "Back to this trait's analysis", "Outlier plots of every trait", "every trait");
  const DesignKind design = trial.plan.design;
  // Cells with no plot leave some means out; main effects alone estimate them.
  if (!st->every_trait_outliers && (design == DesignKind::factorial || design == DesignKind::split_plot ||
                                    design == DesignKind::multi_site))
    toggle(&st->without_interaction, "Include the interaction", "Leave out the interaction", "interaction");

  // The whole screen scrolls by dragging (the header too: at large text it
  // would leave no room otherwise).
  if (st->every_trait_outliers) {
    const float width = ImGui::GetContentRegionAvail().x;
    heading(("Outlier plots of every trait: " + std::to_string(every_trait.size())).c_str());
    ImGui::TextWrapped("Tap a row to open the plot and trait.");
    ButtonLook look{t.confirm, t.confirm_text};
    look.align_left = true;
    for (size_t k = 0; k < every_trait.size(); ++k) {
      const std::string id = "##every" + std::to_string(k);
      if (wrapped_button(id.c_str(), every_trait[k].text, width, h * 1.2f, look, &st->targets)) {
        action = CheckAction{CheckAction::Kind::open_plot_trait, every_trait[k].plot_index};
        action->trait_index = every_trait[k].trait_index;
        action->occasion = every_trait[k].occasion;
      }
    }
    return action;
  }
  if (!a) {
    ImGui::TextWrapped("No analysis yet: %s", problem.c_str());
    return action;
  }
  const float width = ImGui::GetContentRegionAvail().x;
  const std::string unit_suffix = unit.empty() ? "" : " " + unit;
  // What to act on first: outlier plots and missing cells, rows that open the plot.
  const float row = h * 1.2f;
  heading(("Act on these first: " + count_of(static_cast<long>(a->outliers.size()), term::kOutlierPlot) + ", " +
           count_of(static_cast<long>(a->missing_cells.size()), "missing treatment cell"))
              .c_str());
  ImGui::TextWrapped("Rule: %s. Tap a row to open the plot and re-measure or confirm it.", a->outlier_rule.c_str());
  ButtonLook item_look{t.confirm, t.confirm_text};
  item_look.align_left = true;
  for (size_t k = 0; k < a->outliers.size(); ++k) {
    const OutlierPlot& o = a->outliers[k];
    const std::string& label = trial.layout.plots[o.record].label;
    char text[256];
    std::snprintf(text, sizeof text, "Plot %s: %s%s, expected about %s (studentized residual %s)##out%zu", label.c_str(),
                  value_text(o.value).c_str(), unit_suffix.c_str(), table_number(o.expected, 3).c_str(),
                  table_number(o.studentized_external, 3).c_str(), k);
    if (solid_button(text, ImVec2(width, row), item_look, &st->targets, "outlier " + label))
      action = CheckAction{CheckAction::Kind::open_plot, static_cast<size_t>(o.record)};
  }
  ButtonLook missing_look{t.panel, t.text};
  missing_look.align_left = true;
  missing_look.border_px = 2.0f * scale;   // a panel-coloured row needs an edge on the page
  missing_look.border = t.text;
  for (size_t k = 0; k < a->missing_cells.size(); ++k) {
    const MissingCell& m = a->missing_cells[k];
    if (m.records.empty()) continue;
    const std::string& label = trial.layout.plots[m.records.front()].label;
    char text[300];
    std::snprintf(text, sizeof text, "Missing: %s, plot %s##miss%zu", m.label.c_str(), label.c_str(), k);
    if (solid_button(text, ImVec2(width, row), missing_look, &st->targets, "missing " + label))
      action = CheckAction{CheckAction::Kind::open_plot, static_cast<size_t>(m.records.front())};
  }

  heading("The analysis");
  ImGui::TextWrapped("%s, %d plots analysed%s. Grand mean %s%s, CV %s %%, R squared %s, residual SD %s%s.",
                     design_kind_title(a->design), a->n,
                     a->n_missing ? (", " + std::to_string(a->n_missing) + " without a value").c_str() : "",
                     table_number(a->grand_mean, digits_for(a->grand_mean, a->residual_sd, 5)).c_str(), unit_suffix.c_str(), table_number(a->cv_percent, 3).c_str(),
                     table_number(a->r_squared, 3).c_str(), table_number(a->residual_sd, 4).c_str(), unit_suffix.c_str());
  if (a->lsd || a->hsd || a->mdd_percent) {
    std::string line;
    if (a->lsd) line += term::lsd_title(a->alpha) + " " + table_number(*a->lsd, 4) + unit_suffix + ".  ";
    if (a->hsd) line += term::hsd_title(a->alpha) + " " + table_number(*a->hsd, 4) + unit_suffix + ".  ";
    if (a->mdd_percent)
      line += "Smallest difference detectable with 80 % power: " + table_number(*a->mdd_percent, 3) + " % of the mean.";
    ImGui::TextWrapped("%s", line.c_str());
  }

  // Analysis-of-variance table.
  heading(("Analysis of variance (" + std::string(sums_kind_key(a->sums)) + " sums of squares)").c_str());
  const ImGuiTableFlags tf = ImGuiTableFlags_Borders | ImGuiTableFlags_RowBg | ImGuiTableFlags_SizingStretchProp;
  if (ImGui::BeginTable("anova", 7, tf)) {
    for (const char* c : {term::kTerm, "DF", "SS", "MS", "F", "P", term::kTestedAgainst}) ImGui::TableSetupColumn(c);
    ImGui::TableHeadersRow();
    for (const AnovaRow& r : a->table) {
      ImGui::TableNextRow();
      const std::string cells[7] = {r.source, df_text(r.df), table_number(r.ss), r.ms ? table_number(*r.ms) : "",
                                    r.f ? table_number(*r.f, 4) : "", r.p ? p_text(*r.p) : "", r.error_term};
      for (int k = 0; k < 7; ++k) {
        ImGui::TableSetColumnIndex(k);
        ImGui::TextUnformatted(cells[k].c_str());
      }
    }
    ImGui::EndTable();
  }

  // Means of each treatment term.
  for (const TermMeans& m : a->means) {
    heading(("Means of " + m.term + (m.adjusted ? " (adjusted for missing plots)" : "")).c_str());
    {
      const char* label = st->means_in_plan_order ? "Sort by mean" : "Sort as in the plan";
      if (solid_button((std::string(label) + "##" + m.term).c_str(), ImVec2(button_width(label, scale), h), plain,
                       &st->targets, label))
        st->means_in_plan_order = !st->means_in_plan_order;
    }
    const bool letters = !m.levels.empty() && !m.levels.front().group_lsd.empty();
    const int cols = letters ? 6 : 4;
    if (ImGui::BeginTable(("means" + m.term).c_str(), cols, tf)) {
      ImGui::TableSetupColumn(m.term.c_str());
      ImGui::TableSetupColumn(term::kPlots);
      ImGui::TableSetupColumn((std::string(term::kMean) + (unit.empty() ? "" : " (" + unit + ")")).c_str());
      ImGui::TableSetupColumn(term::kSe);
      if (letters) {
        ImGui::TableSetupColumn(term::kLsdGroup);
        ImGui::TableSetupColumn(term::kHsdGroup);
      }
      ImGui::TableHeadersRow();
      // Highest mean first unless the crew asked for the plan's order.
      std::vector<const MeanRow*> rows;
      for (const MeanRow& r : m.levels) rows.push_back(&r);
      if (!st->means_in_plan_order)
        std::stable_sort(rows.begin(), rows.end(), [](const MeanRow* x, const MeanRow* y) {
          if (x->estimable != y->estimable) return x->estimable;
          return x->mean > y->mean;
        });
      for (const MeanRow* r : rows) {
        ImGui::TableNextRow();
        const std::string cells[6] = {r->label, std::to_string(r->n),
                                      r->estimable ? table_number(r->mean, digits_for(a->grand_mean, a->residual_sd, 4)) : term::kNotEstimable,
                                      r->estimable ? table_number(r->se, 3) : "-", r->group_lsd, r->group_hsd};
        for (int k = 0; k < cols; ++k) {
          ImGui::TableSetColumnIndex(k);
          ImGui::TextUnformatted(cells[k].c_str());
        }
      }
      ImGui::EndTable();
    }
    std::string line = "SE of a difference " + table_number(m.sed, 3) + unit_suffix + ", LSD " + table_number(m.lsd, 4) + unit_suffix;
    if (m.lsd_max > m.lsd_min * (1 + 1e-9))
      line += " (pairs " + table_number(m.lsd_min, 4) + " to " + table_number(m.lsd_max, 4) + ")";
    if (m.q_critical > 0) line += ", Tukey HSD " + table_number(m.hsd, 4) + unit_suffix;
    line += "; error: " + m.error_term + ". Means sharing a letter do not differ at alpha " + value_text(a->alpha) + ".";
    ImGui::TextWrapped("%s", line.c_str());
    if (!m.note.empty()) ImGui::TextWrapped("%s", m.note.c_str());
  }

  // The mixed-model check, after the analysis of variance's own answer.
  draw_reml(reml, unit_suffix, digits_for(a->grand_mean, a->residual_sd, 4), t, scale, st);

  // Chart: every plot's value by treatment, with the treatment's mean.
  std::map<std::string, std::vector<double>> by_treatment;
  double lo = 0, hi = 0;
  for (size_t k = 0; k < a->fits.size(); ++k) {
    const PlotFit& f = a->fits[k];
    const PlannedPlot& p = trial.layout.plots[f.record];
    by_treatment[treatment_label(trial.plan, p.levels)].push_back(f.value);
    lo = k ? std::min(lo, f.value) : f.value;
    hi = k ? std::max(hi, f.value) : f.value;
  }
  std::vector<std::pair<double, std::string>> order;
  for (const auto& [name, v] : by_treatment) {
    double s = 0;
    for (double x : v) s += x;
    order.push_back({s / v.size(), name});
  }
  std::sort(order.begin(), order.end());
  heading("Charts");
  {
    Chart c = begin_chart("Plot values by treatment (lowest mean on the left; bar: treatment mean)", lo, hi,
                          260 * scale, t, scale);
    c.x_lo = -0.5;
    c.x_hi = std::max<double>(order.size(), 1) - 0.5;
    ImDrawList* dl = ImGui::GetWindowDrawList();
    const float step = (c.b.x - c.a.x) / std::max<size_t>(order.size(), 1);
    const float dot = std::clamp(step * 0.18f, 2.0f * scale, 5.0f * scale);
    for (size_t k = 0; k < order.size(); ++k) {
      const float cx = c.x(static_cast<double>(k));
      for (double v : by_treatment[order[k].second]) dl->AddCircleFilled(ImVec2(cx, c.y(v)), dot, colour(t.collected));
      dl->AddLine(ImVec2(cx - std::max(step * 0.35f, 3.0f), c.y(order[k].first)),
                  ImVec2(cx + std::max(step * 0.35f, 3.0f), c.y(order[k].first)), colour(t.text), 2.5f * scale);
    }
    if (!order.empty()) {
      const std::string left = order.front().second + "  ...  " + order.back().second;
      dl->AddText(ImVec2(c.a.x, c.b.y + 4 * scale), colour(t.text), left.c_str());
    }
  }
  {
    double flo = 0, fhi = 0, rlo = -3, rhi = 3;
    for (size_t k = 0; k < a->fits.size(); ++k) {
      flo = k ? std::min(flo, a->fits[k].fitted) : a->fits[k].fitted;
      fhi = k ? std::max(fhi, a->fits[k].fitted) : a->fits[k].fitted;
      rlo = std::min(rlo, a->fits[k].studentized);
      rhi = std::max(rhi, a->fits[k].studentized);
    }
    Chart c = begin_chart("Studentized residual against fitted value (lines at 0 and +/-3)", rlo, rhi, 260 * scale, t,
                          scale);
    widen(&flo, &fhi);
    c.x_lo = flo;
    c.x_hi = fhi;
    ImDrawList* dl = ImGui::GetWindowDrawList();
    for (double level : {-3.0, 0.0, 3.0})
      dl->AddLine(ImVec2(c.a.x, c.y(level)), ImVec2(c.b.x, c.y(level)), colour(level == 0 ? t.text : t.flagged),
                  (level == 0 ? 1.5f : 2.0f) * scale);
    for (const PlotFit& f : a->fits) {
      const bool far = std::abs(f.studentized) > 3.0;
      dl->AddCircleFilled(ImVec2(c.x(f.fitted), c.y(f.studentized)), (far ? 6.0f : 4.0f) * scale,
                          colour(far ? t.flagged : t.collected));
    }
    const std::string axis = "fitted " + table_number(flo, 4) + " to " + table_number(fhi, 4);
    dl->AddText(ImVec2(c.a.x, c.b.y + 4 * scale), colour(t.text), axis.c_str());
  }

  // Variance components.
  heading("Variance components");
  const VarianceComponents& vc = a->variance_components;
  if (vc.error) ImGui::Text("error (plot to plot): %s", table_number(*vc.error).c_str());
  if (vc.main_plot_error) ImGui::Text("main-plot error: %s", table_number(*vc.main_plot_error).c_str());
  if (vc.treatment) ImGui::Text("treatment: %s", table_number(*vc.treatment).c_str());
  if (vc.treatment_by_site) ImGui::Text("treatment x site: %s", table_number(*vc.treatment_by_site).c_str());
  if (vc.heritability) ImGui::Text("heritability (entry means): %s", table_number(*vc.heritability, 3).c_str());
  {
    std::string shares = "share of total SS:";
    for (const VarianceShare& s : vc.shares) shares += "  " + s.source + " " + table_number(100 * s.share, 3) + " %";
    ImGui::TextWrapped("%s", shares.c_str());
  }
  for (const std::string& n : vc.notes) ImGui::TextWrapped("note: %s", n.c_str());

  for (const std::string& n : a->notes) ImGui::TextWrapped("note: %s", n.c_str());
  ImGui::Dummy(ImVec2(0, h));
  return action;
}

}  // namespace furrow
