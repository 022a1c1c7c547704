// ComposeReport: the datasheet's sections, laid out by the template, and its companions.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <map>
#include <set>
#include <string>

#include "pipeline/physics/physics.h"
#include "pipeline/report/document.h"
#include "pipeline/report/format.h"
#include "pipeline/report/plot/plot.h"
#include "pipeline/report/report.h"
#include "pipeline/report/results_json.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report {
namespace {

using plot::Canvas;
using plot::Color;
namespace palette = plot::palette;

constexpr double kSecondsPerHour = 3600.0;
constexpr double kSecondsPerDay = 86400.0;
constexpr double kPascalPerMegapascal = 1e6;
constexpr size_t kMaxSummaryCautions = 12;  // longer lists are completed in results.json

// "not available: <reason>", unless the reason says so already.
std::string NotAvailable(const std::string& reason) {
  return reason.rfind("not available", 0) == 0 ? reason : "not available: " + reason;
}

struct Context {
  const ReportInputs& inputs;
  const Template& layout;
  const ReportOptions& options;
  const Sheet& sheet;
  Document& doc;
  double moisture_scale() const { return sheet.rules.moisture_in_percent ? 100.0 : 1.0; }
  // The heading of section `key`, numbered by its place in the template's section list.
  std::string NumberedHeading(const std::string& key, const std::string& title) const {
    return fmt::format("{}  {}", sheet.SectionNumber(key), title);
  }
};

// Marker per (branch, temperature index): shape and fill tell branches apart in greyscale.
plot::MarkerStyle BranchMarker(ingest::Branch branch, int temperature_index) {
  plot::MarkerStyle m;
  static constexpr plot::MarkerShape kShapes[] = {
      plot::MarkerShape::kCircle, plot::MarkerShape::kTriangleUp, plot::MarkerShape::kDiamond};
  m.shape = branch == ingest::Branch::kDesorption ? plot::MarkerShape::kSquare
                                                  : kShapes[temperature_index % 3];
  if (branch == ingest::Branch::kDesorption && temperature_index > 0) {
    m.shape = plot::MarkerShape::kTriangleDown;
  }
  m.filled = branch != ingest::Branch::kDesorption;
  m.color = branch == ingest::Branch::kDesorption ? palette::kOchre : palette::kTeal;
  if (temperature_index > 0) {
    m.color = branch == ingest::Branch::kDesorption ? palette::kPlum : palette::kMoss;
  }
  return m;
}

// "gab" -> "GAB", "oswin" -> "Oswin": short names for legends.
std::string ShortModelName(std::string name) {
  if (name.size() <= 3) {
    for (char& c : name) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  } else if (!name.empty()) {
    name[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(name[0])));
  }
  return name;
}

std::vector<double> DistinctTemperatures(const ReportInputs& inputs) {
  std::vector<double> out;
  if (inputs.reduced == nullptr) return out;
  for (const reduce::IsothermPoint& p : inputs.reduced->points) {
    bool found = false;
    for (double t : out) found = found || std::abs(t - p.temperature_K) < 0.5;
    if (!found) out.push_back(p.temperature_K);
  }
  std::sort(out.begin(), out.end());
  return out;
}

int TemperatureIndex(const std::vector<double>& temperatures, double temperature_K) {
  for (size_t i = 0; i < temperatures.size(); ++i) {
    if (std::abs(temperatures[i] - temperature_K) < 0.5) return static_cast<int>(i);
  }
  return 0;
}

std::string MethodText(const ingest::IngestResult* ingested) {
  if (ingested == nullptr) return "";
  std::set<std::string> methods;
  for (const ingest::DataSetSpec& d : ingested->job.datasets) {
    methods.insert(d.method == ingest::Method::kDesiccator
                       ? "desiccator series over saturated salt solutions"
                       : "dynamic vapour sorption (continuous mass log)");
  }
  std::string out;
  for (const std::string& m : methods) out += (out.empty() ? "" : "; ") + m;
  return out;
}

// ---- Figures --------------------------------------------------------------------------------
plot::Figure IsothermFigure(const Context& ctx, bool with_secondary) {
  plot::Figure fig;
  fig.x.label = "relative humidity (%)";
  fig.x.min = 0.0;
  fig.x.max = 100.0;
  fig.x.num_ticks = 6;
  fig.y.label = ctx.sheet.moisture_axis_label;
  fig.y.min = 0.0;  // moisture contents are not negative; a band dipping below 0 is clipped
  fig.y.num_ticks = 8;
  const double ms = ctx.moisture_scale();
  const std::vector<double> temperatures = DistinctTemperatures(ctx.inputs);
  const double k = ctx.sheet.rules.coverage_factor;

  // Best model per group: confidence band and curve.
  if (ctx.inputs.fits != nullptr) {
    const fit::IsothermFits& fits = *ctx.inputs.fits;
    for (size_t g = 0; g < fits.best_fit_per_group.size() && g < fits.groups.size(); ++g) {
      const int best = fits.best_fit_per_group[g];
      if (best < 0 || static_cast<size_t>(best) >= fits.fits.size()) continue;
      const fit::ModelFit& mf = fits.fits[static_cast<size_t>(best)];
      if (mf.band.empty()) continue;
      const plot::MarkerStyle m = BranchMarker(
          fits.groups[g].branch, TemperatureIndex(temperatures, fits.groups[g].temperature_K));
      plot::Band band;
      plot::Series curve;
      for (const fitters::BandPoint& b : mf.band) {
        band.x.push_back(b.x * 100.0);
        band.low.push_back(b.confidence_low * ms);
        band.high.push_back(b.confidence_high * ms);
        curve.x.push_back(b.x * 100.0);
        curve.y.push_back(b.y * ms);
      }
      band.fill = m.color.Tint(0.78);
      if (g == 0) band.legend = "confidence band of the fit";
      curve.marker.shape = plot::MarkerShape::kNone;
      curve.line = plot::LineStyle{m.color, 1.1, {}};
      if (fits.groups[g].branch == ingest::Branch::kDesorption) curve.line->dash_pt = {4.0, 2.0};
      curve.legend = ShortModelName(mf.model_name) + " fit, " + GroupLabel(fits.groups[g]);
      fig.bands.push_back(std::move(band));
      fig.series.push_back(std::move(curve));
    }
  }
  // Measured points with expanded uncertainties, one series per branch and temperature.
  if (ctx.inputs.reduced != nullptr) {
    std::map<std::pair<int, int>, plot::Series> groups;
    for (const reduce::IsothermPoint& p : ctx.inputs.reduced->points) {
      const int ti = TemperatureIndex(temperatures, p.temperature_K);
      const auto key = std::make_pair(static_cast<int>(p.branch), ti);
      plot::Series& s = groups[key];
      if (s.x.empty()) {
        s.marker = BranchMarker(p.branch, ti);
        s.legend = BranchLabel(p.branch) + ", " + TemperatureLabel(p.temperature_K) + " (± U)";
      }
      s.x.push_back(p.rh_fraction * 100.0);
      s.y.push_back(p.moisture_kg_per_kg * ms);
      s.x_error.push_back(p.expanded_u_rh_fraction > 0.0 ? p.expanded_u_rh_fraction * 100.0
                                                         : k * p.u_rh_fraction * 100.0);
      s.y_error.push_back(p.expanded_u_moisture_kg_per_kg > 0.0
                              ? p.expanded_u_moisture_kg_per_kg * ms
                              : k * p.u_moisture_kg_per_kg * ms);
    }
    for (auto& [key, s] : groups) fig.series.push_back(std::move(s));
    if (!ctx.inputs.reduced->retention.empty()) {
      plot::Series r;
      r.legend = "retention points (Kelvin-equivalent RH)";
      r.marker = {plot::MarkerShape::kDiamond, false, 4.6, palette::kPlum};
      for (const reduce::RetentionIsothermPoint& p : ctx.inputs.reduced->retention) {
        r.x.push_back(p.equivalent_rh_fraction * 100.0);
        r.y.push_back(p.moisture_kg_per_kg * ms);
        r.y_error.push_back(k * p.u_moisture_kg_per_kg * ms);
      }
      fig.series.push_back(std::move(r));
    }
  }
  if (with_secondary) {
    const double temperature_K = temperatures.empty() ? 296.15 : temperatures.front();
    plot::SecondaryAxis top;
    top.label = fmt::format("capillary pressure (MPa) at {}, Kelvin equation",
                            TemperatureLabel(temperature_K));
    top.scale = plot::Scale::kLog10;
    top.to_secondary = [temperature_K](double rh_percent) {
      if (!(rh_percent > 0.0 && rh_percent < 100.0)) return std::nan("");
      return physics::CapillaryPressure_Pa(rh_percent / 100.0, temperature_K) /
             kPascalPerMegapascal;
    };
    top.from_secondary = [temperature_K](double pressure_MPa) {
      return physics::RhFromCapillaryPressure(pressure_MPa * kPascalPerMegapascal, temperature_K) *
             100.0;
    };
    fig.x_top = top;
  }
  return fig;
}

plot::Figure ResidualFigure(const Context& ctx) {
  plot::Figure fig;
  fig.x.label = "relative humidity (%)";
  fig.x.min = 0.0;
  fig.x.max = 100.0;
  fig.y.label = "residual (" + ctx.sheet.moisture_unit + ")";
  fig.y.num_ticks = 5;
  fig.horizontal_rules = {0.0};
  fig.legend = false;
  const double ms = ctx.moisture_scale();
  if (ctx.inputs.fits == nullptr) return fig;
  const fit::IsothermFits& fits = *ctx.inputs.fits;
  const std::vector<double> temperatures = DistinctTemperatures(ctx.inputs);
  for (size_t g = 0; g < fits.best_fit_per_group.size() && g < fits.groups.size(); ++g) {
    const int best = fits.best_fit_per_group[g];
    if (best < 0 || static_cast<size_t>(best) >= fits.fits.size()) continue;
    const fit::ModelFit& mf = fits.fits[static_cast<size_t>(best)];
    const fit::FitGroup& group = fits.groups[g];
    plot::Series s;
    s.marker = BranchMarker(group.branch, TemperatureIndex(temperatures, group.temperature_K));
    s.marker.size_pt = 4.0;
    for (size_t i = 0; i < group.observations.size() && i < mf.result.residuals.size(); ++i) {
      s.x.push_back(group.observations[i].x[0] * 100.0);
      s.y.push_back(mf.result.residuals[i] * ms);
    }
    fig.series.push_back(std::move(s));
  }
  // Symmetric range about zero so the sign of the residuals reads at a glance.
  double largest = 0.0;
  for (const plot::Series& s : fig.series) {
    for (double v : s.y) largest = std::max(largest, std::abs(v));
  }
  if (largest > 0.0) {
    const double limit = plot::NiceNumber(largest * 1.15, false);
    fig.y.min = -limit;
    fig.y.max = limit;
  }
  return fig;
}

// ---- Sections -------------------------------------------------------------------------------
// Where the summary sends the reader for the conditions of use: the Cautions section as
// numbered by the template, or the standing cautions themselves when the template has none.
std::string ConditionsOfUseReference(const Sheet& sheet) {
  const int cautions = sheet.SectionNumber("cautions");
  if (cautions > 0) {
    return fmt::format("See section {} for the conditions of use of these results.", cautions);
  }
  std::string all;
  for (const std::string& c : sheet.standing_cautions) all += (all.empty() ? "" : " ") + c;
  return all;
}

void SummarySection(Context& ctx, bool compact) {
  Document& doc = ctx.doc;
  doc.Heading(ctx.NumberedHeading("summary", "Summary"));
  std::vector<std::pair<std::string, std::string>> facts;
  if (ctx.inputs.ingested != nullptr) {
    const ingest::JobSpec& job = ctx.inputs.ingested->job;
    facts.emplace_back("Material", PrintedField(job.material_name));
    if (!job.material_description.empty())
      facts.emplace_back("Description", PrintedField(job.material_description));
    if (!job.client.empty()) facts.emplace_back("Client", PrintedField(job.client));
    std::string specimens;
    for (const ingest::SpecimenSpec& s : job.specimens) {
      specimens += (specimens.empty() ? "" : ", ") + s.id;
    }
    facts.emplace_back("Specimens",
                       fmt::format("{} ({})", job.specimens.size(), PrintedField(specimens)));
    facts.emplace_back("Method", MethodText(ctx.inputs.ingested));
    std::string temperatures;
    for (double t : DistinctTemperatures(ctx.inputs)) {
      temperatures += (temperatures.empty() ? "" : ", ") + TemperatureLabel(t);
    }
    if (!temperatures.empty()) facts.emplace_back("Temperature", temperatures);
    if (!job.test_dates.empty()) facts.emplace_back("Test dates", PrintedField(job.test_dates));
    facts.emplace_back("Issued",
                       job.issue_date.empty() ? ctx.options.document_date : job.issue_date);
  }
  doc.KeyValues(facts, 90.0);

  doc.Subheading(fmt::format("Results (expanded uncertainty U, k = {})",
                             CoverageText(ctx.sheet.rules.coverage_factor)));
  std::vector<std::vector<std::string>> rows;
  for (const Quantity& q : ctx.sheet.headline) {
    // The one-page summary prints each best model's parameters on one row (below).
    if (compact && q.key.rfind("best_", 0) == 0) continue;
    rows.push_back({q.label, q.text});
  }
  rows.push_back({"Hygroscopicity class (Ph. Eur. 5.11)", ctx.sheet.hygroscopicity_class});
  if (compact && ctx.inputs.fits != nullptr) {
    for (int best : ctx.inputs.fits->best_fit_per_group) {
      if (best < 0 || static_cast<size_t>(best) >= ctx.sheet.models.size()) continue;
      const ModelRow& row = ctx.sheet.models[static_cast<size_t>(best)];
      std::string text;
      for (const Quantity& q : row.parameters) {
        text += (text.empty() ? "" : ";  ") + q.label + " = " + q.text;
      }
      rows.push_back({"Best model, " + row.group_label + ": " + row.model_title, text});
    }
  } else {
    rows.push_back({"Best model (lowest AICc)", ctx.sheet.best_model_text.empty()
                                                    ? "none converged"
                                                    : ctx.sheet.best_model_text});
  }
  const double w = doc.width();
  doc.Table({{"Quantity", w * (compact ? 0.45 : 0.60), false},
             {"Value ± U", w * (compact ? 0.55 : 0.40), false}},
            rows, compact ? 7.5 : 8.0);

  std::vector<std::string> cautions = ctx.sheet.cautions;
  const size_t limit = compact ? 4 : kMaxSummaryCautions;
  if (cautions.size() > limit) {
    const size_t more = cautions.size() - (limit - 1);
    cautions.resize(limit - 1);
    cautions.push_back(fmt::format("… and {} further notes (results.json, \"cautions\").", more));
  }
  if (cautions.empty()) cautions.emplace_back("No measurement or fitting cautions were raised.");
  cautions.push_back(compact ? ctx.sheet.standing_cautions[0] + " " + ctx.sheet.standing_cautions[1]
                             : ConditionsOfUseReference(ctx.sheet));
  if (compact) {
    // The isotherm figure of the one-page summary takes what the cautions and the
    // signatories leave.
    double reserved = 30.0;  // cautions heading
    for (const std::string& c : cautions) {
      reserved +=
          8.0 * 1.32 * static_cast<double>(doc.canvas().Wrap(c, 8.0, doc.width() - 12.0).size()) +
          1.5;
    }
    if (!ctx.layout.signatories.empty()) reserved += 72.0;
    const double height = std::clamp(doc.cursor() - doc.bottom() - reserved - 8.0, 110.0, 260.0);
    doc.EnsureSpace(height + 8.0);
    doc.Skip(8.0);
    plot::Figure fig = IsothermFigure(ctx, false);
    fig.font_size_pt = 7.0;
    plot::DrawFigure(doc.canvas(), fig, {doc.left(), doc.cursor() - height, doc.width(), height});
    doc.Skip(height);
  }

  doc.Subheading("Cautions");
  doc.Bullets(cautions, 8.0);

  // Signatories.
  if (!ctx.layout.signatories.empty()) {
    const double height = 46.0;
    doc.EnsureSpace(height + 10.0);
    doc.Skip(14.0);
    const size_t n = ctx.layout.signatories.size();
    const double column = doc.width() / static_cast<double>(std::max<size_t>(n, 2));
    Canvas& c = doc.canvas();
    c.Text(doc.left(), doc.cursor(), "Approved for issue", 8.0, Canvas::Align::kLeft, true);
    doc.Skip(26.0);
    for (size_t i = 0; i < n; ++i) {
      const double x = doc.left() + column * static_cast<double>(i);
      c.Line(x, doc.cursor(), x + column - 20.0, doc.cursor(), 0.5, palette::kSlate);
      c.Text(x, doc.cursor() - 9.0, ctx.layout.signatories[i], 7.5);
      c.Text(x, doc.cursor() - 18.0, "signature and date", 6.5, Canvas::Align::kLeft, false,
             palette::kSlate);
    }
    doc.Skip(20.0);
    if (!ctx.layout.accreditation.empty()) {
      doc.Paragraph(ctx.layout.accreditation, 7.0, 0.0, palette::kSlate);
    }
  }
}

void IsothermSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("isotherm", "Sorption isotherm"));
  const double main_height = 400.0;
  const double residual_height = 150.0;
  doc.EnsureSpace(main_height + residual_height);
  plot::Figure fig = IsothermFigure(ctx, true);
  fig.font_size_pt = 7.5;
  plot::Figure res = ResidualFigure(ctx);
  // One left edge for both panels.
  const double pad = std::max(plot::AutomaticLeftPadding(doc.canvas(), fig),
                              plot::AutomaticLeftPadding(doc.canvas(), res));
  fig.left_padding_pt = res.left_padding_pt = pad;
  plot::DrawFigure(doc.canvas(), fig,
                   {doc.left(), doc.cursor() - main_height, doc.width(), main_height});
  doc.Skip(main_height + 6.0);
  res.title = "Residuals of the best fits (measured − fitted)";
  res.caption = fmt::format(
      "Points: combined specimens per step, bars: expanded uncertainty U (k = {}) in RH and "
      "moisture content. Curves: best model of each branch (lowest AICc) with its confidence "
      "band of the mean curve (delta method). Top axis: capillary pressure of the pore water "
      "in equilibrium with the RH (Kelvin equation).",
      CoverageText(ctx.sheet.rules.coverage_factor));
  const double caption = plot::CaptionHeight(doc.canvas(), res, doc.width());
  plot::DrawFigure(doc.canvas(), res,
                   {doc.left(), doc.cursor() - residual_height - caption, doc.width(),
                    residual_height + caption});
  doc.Skip(residual_height + caption);
}

void ModelsSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("models", "Model comparison"));
  doc.Paragraph(fmt::format("Parameters with expanded uncertainty U (k = {}); correlations with "
                            "|r| > 0.95 are listed below the parameters. RMSE in {}; MRD: mean "
                            "relative deviation; rank by AICc within each branch.",
                            CoverageText(ctx.sheet.rules.coverage_factor), ctx.sheet.moisture_unit),
                8.0, 0.0, palette::kSlate);
  const double w = doc.width();
  // Flags are long sentences: they go in numbered notes below the table, so the numeric
  // columns keep a readable width.
  std::vector<TableColumn> columns = {
      {"Model", w * 0.25, false}, {"Parameters ± U", w * 0.37, false},
      {"RMSE", w * 0.095, true},  {"MRD", w * 0.065, true},
      {"AICc", w * 0.07, true},   {"BIC", w * 0.07, true},
      {"Rank", w * 0.08, true}};
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> notes;
  for (const ModelRow& row : ctx.sheet.models) {
    std::string parameters;
    for (const Quantity& q : row.parameters) {
      parameters += (parameters.empty() ? "" : "\n") + q.label + " = " + q.text;
    }
    for (const std::string& c : row.correlations) parameters += "\n" + c;
    std::string model = row.model_title + "\n" + row.group_label;
    if (!row.flags.empty()) {
      std::string flags;
      for (const std::string& f : row.flags) flags += (flags.empty() ? "" : "; ") + f;
      notes.push_back(fmt::format("[{}] {}, {}: {}", notes.size() + 1, row.model_title,
                                  row.group_label, flags));
      model += fmt::format("\nsee note [{}]", notes.size());
    }
    const bool stats = row.converged;  // a failed fit has no statistics to compare
    rows.push_back({model, parameters, stats ? row.rmse_text : "–", stats ? row.mrd_text : "–",
                    stats ? row.aicc_text : "–", stats ? row.bic_text : "–",
                    row.rank > 0 ? std::to_string(row.rank) : "–"});
  }
  doc.Table(columns, rows, 7.0);
  if (!notes.empty()) {
    doc.Subheading("Flags");
    for (const std::string& note : notes) doc.Paragraph(note, 7.0, 0.0, palette::kSlate);
  }
  if (ctx.inputs.fits != nullptr) {
    doc.Subheading("Equations");
    std::set<std::string> shown;
    for (const fit::ModelFit& mf : ctx.inputs.fits->fits) {
      if (!shown.insert(mf.model_name).second) continue;
      std::string text =
          (mf.info.title.empty() ? mf.model_name : mf.info.title) + ":  " + mf.info.equation;
      if (!mf.info.source.empty()) text += "  (" + mf.info.source + ")";
      doc.Paragraph(text, 7.5);
    }
  }
}

void PoresSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("pores", "Pore-size distribution"));
  if (ctx.inputs.pores == nullptr || ctx.inputs.pores->distributions.empty()) {
    doc.Paragraph("No pore-size distribution was computed for this job.");
    return;
  }
  const pores::PoreAnalysis& pa = *ctx.inputs.pores;
  const double side = 150.0;  // assumptions column beside the figures
  const double fig_width = doc.width() - side - 10.0;
  const double height = 230.0;
  // 1 m3/kg = 1e6 mm3/g; 1 m = 1e9 nm.
  constexpr double kVolume = 1e6;
  constexpr double kRadius = 1e9;
  plot::Figure density;
  density.x.label = "pore radius (nm)";
  density.x.scale = plot::Scale::kLog10;
  density.y.label = "dV/dlog r (mm³/g)";
  density.y.include_zero = true;
  plot::Figure cumulative = density;
  cumulative.y.label = "cumulative pore volume (mm³/g)";
  for (size_t d = 0; d < pa.distributions.size(); ++d) {
    const pores::PoreDistribution& pd = pa.distributions[d];
    const Color color = palette::Series(static_cast<int>(d));
    plot::Band band, cband;
    plot::Series s, cs;
    for (const pores::PoreDistributionPoint& p : pd.points) {
      const double r = p.radius_m * kRadius;
      band.x.push_back(r);
      band.low.push_back(p.dv_dlogr_low_m3_per_kg * kVolume);
      band.high.push_back(p.dv_dlogr_high_m3_per_kg * kVolume);
      s.x.push_back(r);
      s.y.push_back(p.dv_dlogr_m3_per_kg * kVolume);
      cband.x.push_back(r);
      cband.low.push_back(p.cumulative_low_m3_per_kg * kVolume);
      cband.high.push_back(p.cumulative_high_m3_per_kg * kVolume);
      cs.x.push_back(r);
      cs.y.push_back(p.cumulative_volume_m3_per_kg * kVolume);
    }
    band.fill = cband.fill = color.Tint(0.8);
    const bool stepwise = pd.method == "stepwise";
    s.marker.shape = cs.marker.shape =
        stepwise ? plot::MarkerShape::kSquare : plot::MarkerShape::kNone;
    s.marker.filled = cs.marker.filled = false;
    s.marker.color = cs.marker.color = color;
    s.marker.size_pt = cs.marker.size_pt = 3.6;
    s.line = cs.line = plot::LineStyle{
        color, 1.1, stepwise ? std::vector<double>{3.0, 2.0} : std::vector<double>{}};
    s.legend = cs.legend = pd.method + (pd.model_name.empty() ? "" : " (" + pd.model_name + ")") +
                           ", " + BranchLabel(pd.branch);
    if (d == 0) band.legend = "band (fit uncertainty)";
    if (!stepwise) {
      density.bands.push_back(std::move(band));
      cumulative.bands.push_back(std::move(cband));
    }
    density.series.push_back(std::move(s));
    cumulative.series.push_back(std::move(cs));
  }
  const double top = doc.cursor();
  doc.EnsureSpace(2 * height + 10.0);
  plot::DrawFigure(doc.canvas(), density, {doc.left(), top - height, fig_width, height});
  plot::DrawFigure(doc.canvas(), cumulative,
                   {doc.left(), top - 2 * height - 8.0, fig_width, height});
  // Assumptions beside the figures.
  Canvas& c = doc.canvas();
  double y = top - 12.0;
  const double x = doc.left() + fig_width + 10.0;
  c.Text(x, y, "Assumptions", 8.5, Canvas::Align::kLeft, true, palette::kTeal);
  y -= 12.0;
  const double column_bottom = top - 2 * height;
  bool column_full = false;
  std::vector<std::string> all_assumptions;  // every stated assumption, once, below the table
  std::set<std::string> seen_assumptions;
  for (const pores::PoreDistribution& pd : pa.distributions) {
    std::vector<std::string> items = {
        fmt::format("{} ({}, {})", pd.method, BranchLabel(pd.branch),
                    TemperatureLabel(pd.temperature_K)),
        std::string("meniscus: ") +
            (pd.meniscus == physics::Meniscus::kHemispherical ? "hemispherical" : "cylindrical"),
        "film: " + pd.film_description,
        fmt::format("Kelvin-resolved radii {} to {} nm",
                    FormatSignificant(pd.resolved_radius_min_m * kRadius, 3),
                    FormatSignificant(pd.resolved_radius_max_m * kRadius, 3)),
        fmt::format("adsorbed below: {} mm³/g",
                    FormatSignificant(pd.adsorbed_volume_m3_per_kg * kVolume, 3))};
    for (size_t i = 0; i < items.size() && !column_full; ++i) {
      for (const std::string& line : c.Wrap(items[i], 7.0, side - 8.0)) {
        if (y < column_bottom) {
          column_full = true;
          break;
        }
        c.Text(x + (i == 0 ? 0.0 : 6.0), y, line, 7.0, Canvas::Align::kLeft, i == 0);
        y -= 8.8;
      }
    }
    y -= 6.0;
    for (const std::string& a : pd.assumptions) {
      if (seen_assumptions.insert(a).second) all_assumptions.push_back(a);
    }
  }
  if (column_full) {
    c.Text(x, column_bottom - 8.8, "(continued below the table)", 7.0, Canvas::Align::kLeft, false,
           palette::kSlate);
  }
  doc.set_cursor(top - 2 * height - 8.0);

  // Derived quantities.
  std::vector<std::vector<std::string>> rows;
  for (const Quantity& q : ctx.sheet.headline) {
    if (q.key.rfind("pore_volume_", 0) == 0 || q.key.rfind("modal_radius_", 0) == 0 ||
        q.key.rfind("surface_area_", 0) == 0) {
      rows.push_back({q.label, q.text});
    }
  }
  for (const pores::Hysteresis& h : pa.hysteresis) {
    if (!h.available) {
      rows.push_back({"Hysteresis", NotAvailable(h.reason)});
      continue;
    }
    rows.push_back(
        {"Largest hysteresis (" + TemperatureLabel(h.temperature_K) + ")",
         fmt::format("{} {} at {} % RH; significant from {} to {} % RH",
                     FormatSignificant(h.max_difference_kg_per_kg * ctx.moisture_scale(), 2),
                     ctx.sheet.moisture_unit, FormatFixed(h.rh_at_max_fraction * 100.0, 0),
                     FormatFixed(h.significant_rh_low_fraction * 100.0, 0),
                     FormatFixed(h.significant_rh_high_fraction * 100.0, 0))});
  }
  for (const pores::IsostericHeat& q : pa.isosteric_heat) {
    if (!q.available) {
      rows.push_back({"Isosteric heat of sorption", NotAvailable(q.reason)});
      continue;
    }
    std::string text;
    for (const pores::IsostericHeatPoint& p : q.points) {
      text += (text.empty() ? "" : "\n") +
              fmt::format("at {} {}: q_st,net = {} kJ/mol",
                          FormatSignificant(p.moisture_kg_per_kg * ctx.moisture_scale(), 2),
                          ctx.sheet.moisture_unit,
                          FormatWithUncertainty(
                              p.net_heat_J_per_mol / 1000.0,
                              ctx.sheet.rules.coverage_factor * p.u_net_heat_J_per_mol / 1000.0,
                              ctx.sheet.rules.significant_digits));
    }
    rows.push_back({"Isosteric heat (" + BranchLabel(q.branch) + ")", text});
  }
  if (!rows.empty()) {
    const double w = doc.width();
    doc.Table({{"Quantity", w * 0.45, false}, {"Value ± U", w * 0.55, false}}, rows, 7.5);
  }
  if (!all_assumptions.empty()) {
    doc.Subheading("Assumptions of the Kelvin inversion, as stated by the analysis");
    doc.Bullets(all_assumptions, 7.5);
  }
}

void KineticsSection(Context& ctx) {
  Document& doc = ctx.doc;
  if (ctx.inputs.ingested == nullptr) return;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("kinetics", "Kinetics"));
  const double height = 250.0;
  // Vapour-sorption logs: mass and RH against time, equilibria marked.
  for (const ingest::VaporLog& log : ctx.inputs.ingested->vapor_logs) {
    plot::Figure fig;
    fig.title = "Mass and RH against time: " + log.dataset_id + ", specimen " + log.specimen_id;
    fig.x.label = "time (h)";
    fig.x.min = 0.0;
    fig.y.label = "mass (g)";
    fig.y_right = plot::Axis{};
    fig.y_right->label = "RH (%)";
    fig.y_right->min = 0.0;
    fig.y_right->max = 100.0;
    plot::Series mass, rh;
    mass.legend = "mass";
    mass.marker.shape = plot::MarkerShape::kNone;
    mass.line = plot::LineStyle{palette::kTeal, 1.0, {}};
    rh.legend = "measured RH (right axis)";
    rh.marker.shape = plot::MarkerShape::kNone;
    rh.line = plot::LineStyle{palette::kOchre, 0.8, {3.0, 1.5}};
    rh.right_axis = true;
    const equilibrate::Trace* trace = nullptr;
    if (ctx.inputs.equilibria != nullptr) {
      for (const equilibrate::Trace& t : ctx.inputs.equilibria->traces) {
        if (t.dataset_id == log.dataset_id) trace = &t;
      }
    }
    if (trace != nullptr) {
      for (const equilibrate::TracePoint& p : trace->points) {
        mass.x.push_back(p.time_s / kSecondsPerHour);
        mass.y.push_back(p.mass_g);
        rh.x.push_back(p.time_s / kSecondsPerHour);
        rh.y.push_back(p.rh_fraction * 100.0);
      }
      for (double t : trace->equilibrium_times_s) {
        fig.events.push_back({t / kSecondsPerHour, palette::kSlate.Tint(0.35), 0.5});
      }
    } else {
      for (const ingest::VaporLogStep& step : log.steps) {
        for (const ingest::LogBlock& b : step.blocks) {
          mass.x.push_back(b.time_s / kSecondsPerHour);
          mass.y.push_back(b.mass_g);
          rh.x.push_back(b.time_s / kSecondsPerHour);
          rh.y.push_back(b.rh_measured_fraction * 100.0);
        }
      }
    }
    fig.series = {mass, rh};
    fig.caption = "Dashed vertical lines: where an equilibrium was detected (or extrapolated).";
    doc.EnsureSpace(height);
    plot::DrawFigure(doc.canvas(), fig, {doc.left(), doc.cursor() - height, doc.width(), height});
    doc.Skip(height + 10.0);
  }
  // Desiccator series: mass against time per specimen, steps separated.
  for (const ingest::DesiccatorSeries& series : ctx.inputs.ingested->desiccator_series) {
    plot::Figure fig;
    fig.title = "Mass against time per step and specimen: " + series.dataset_id;
    fig.x.label = "time since the first weighing (d)";
    fig.x.min = 0.0;
    fig.y.label = "mass (g)";
    std::map<std::string, int> specimen_index;
    std::set<double> step_starts;
    for (const ingest::DesiccatorStep& step : series.steps) {
      if (!specimen_index.count(step.specimen_id)) {
        const int i = static_cast<int>(specimen_index.size());
        specimen_index[step.specimen_id] = i;
      }
    }
    for (const ingest::DesiccatorStep& step : series.steps) {
      const int i = specimen_index[step.specimen_id];
      plot::Series s;
      s.marker.shape = static_cast<plot::MarkerShape>(i % 5);
      s.marker.color = palette::Series(i);
      s.marker.size_pt = 3.4;
      s.marker.filled = i % 2 == 0;
      s.line = plot::LineStyle{palette::Series(i), 0.7, {}};
      for (const ingest::Weighing& wgh : step.weighings) {
        s.x.push_back(wgh.time_s / kSecondsPerDay);
        s.y.push_back(wgh.mass_g);
      }
      if (!step.weighings.empty())
        step_starts.insert(step.weighings.front().time_s / kSecondsPerDay);
      bool first = true;
      for (const plot::Series& other : fig.series)
        first = first && other.marker.color.r != s.marker.color.r;
      if (first) s.legend = "specimen " + step.specimen_id;
      fig.series.push_back(std::move(s));
    }
    for (double t : step_starts) fig.events.push_back({t, palette::kSlate.Tint(0.45), 0.5});
    fig.caption =
        "Each line joins the weighings of one specimen within one humidity step; "
        "dashed lines mark the start of a step.";
    doc.EnsureSpace(height);
    plot::DrawFigure(doc.canvas(), fig, {doc.left(), doc.cursor() - height, doc.width(), height});
    doc.Skip(height + 10.0);
  }
}

void EquilibriaSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("equilibria", "Equilibrium table"));
  if (ctx.inputs.reduced == nullptr) return;
  doc.Paragraph(fmt::format("Combined specimens per step. U: expanded uncertainty (k = {}); "
                            "spread: between-specimen standard deviation; t_eq: time to "
                            "equilibrium (longest specimen).",
                            CoverageText(ctx.sheet.rules.coverage_factor)),
                8.0, 0.0, palette::kSlate);
  const double w = doc.width();
  const std::string mu = ctx.sheet.moisture_unit;
  std::vector<TableColumn> columns = {{"Data set / step", w * 0.19, false},
                                      {"Branch", w * 0.10, false},
                                      {"T (°C)", w * 0.065, true},
                                      {"n", w * 0.035, true},
                                      {"RH ± U (%)", w * 0.13, true},
                                      {"Moisture ± U (" + mu + ")", w * 0.17, true},
                                      {"Spread (" + mu + ")", w * 0.09, true},
                                      {"t_eq (h)", w * 0.07, true},
                                      {"Flags", w * 0.15, false}};
  const double ms = ctx.moisture_scale();
  const int digits = ctx.sheet.rules.significant_digits;
  const double k = ctx.sheet.rules.coverage_factor;
  std::vector<std::vector<std::string>> rows;
  for (const reduce::IsothermPoint& p : ctx.inputs.reduced->points) {
    std::string flags;
    for (const std::string& f : p.flags) flags += (flags.empty() ? "" : "; ") + f;
    if (!p.equilibrated)
      flags = fmt::format("not equilibrated{}{}", flags.empty() ? "" : "; ", flags);
    if (p.extrapolated) flags = fmt::format("extrapolated{}{}", flags.empty() ? "" : "; ", flags);
    const Quantity rh = PointRhQuantity(p, ctx.sheet.rules);
    const Quantity moisture = PointMoistureQuantity(p, ctx.sheet.rules);
    rows.push_back(
        {p.dataset_id + " / " + p.step_label, BranchLabel(p.branch),
         FormatFixed(p.temperature_K - 273.15, 1), std::to_string(p.num_specimens),
         FormatWithUncertainty(rh.display_value, rh.display_expanded_uncertainty, digits),
         FormatWithUncertainty(moisture.display_value, moisture.display_expanded_uncertainty,
                               digits) +
             (CoverageText(p.coverage_factor) != CoverageText(k)
                  ? " (k = " + CoverageText(p.coverage_factor) + ")"
                  : std::string()),
         FormatSignificant(p.between_specimen_sd_kg_per_kg * ms, 2),
         FormatSignificant(p.time_to_equilibrium_s / kSecondsPerHour, 3),
         flags.empty() ? "–" : flags});
  }
  doc.Table(columns, rows, 7.0);
}

// A recorded setting as the user wrote it: numbers by FormatSetting (0.106, not
// 0.10600000000000001), text in quotes, lists in brackets.
std::string SettingText(const nlohmann::ordered_json& j) {
  if (j.is_number_float()) return FormatSetting(j.get<double>());
  if (j.is_array()) {
    std::string out;
    for (const auto& item : j) out += (out.empty() ? "" : ", ") + SettingText(item);
    return "[" + out + "]";
  }
  if (j.is_object()) {
    std::string out;
    for (auto it = j.begin(); it != j.end(); ++it) {
      out += (out.empty() ? "" : ", ") + it.key() + " = " + SettingText(it.value());
    }
    return "{ " + out + " }";
  }
  return j.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

// The budget of one reported point: the point of the equilibrium table with the largest
// expanded uncertainty of its moisture content, named by data set, step, RH, branch,
// temperature and specimens. Every point's budget is in results.json.
void BudgetOfLargestPoint(Context& ctx) {
  Document& doc = ctx.doc;
  doc.Subheading("Uncertainty budget of one reported point");
  if (ctx.inputs.reduced == nullptr || ctx.inputs.reduced->points.empty()) {
    doc.Paragraph("No equilibrium point was reported.", 8.0);
    return;
  }
  const auto& points = ctx.inputs.reduced->points;
  const auto worst =
      std::max_element(points.begin(), points.end(), [](const auto& a, const auto& b) {
        return a.expanded_u_moisture_kg_per_kg < b.expanded_u_moisture_kg_per_kg;
      });
  const PointBudget budget = CombinedPointBudget(*ctx.inputs.reduced, *worst);
  const Quantity rh = PointRhQuantity(*worst, ctx.sheet.rules);
  const Quantity moisture = PointMoistureQuantity(*worst, ctx.sheet.rules);
  std::string specimens;
  for (const std::string& id : budget.specimen_ids)
    specimens += (specimens.empty() ? "" : ", ") + id;
  doc.Paragraph(
      fmt::format("Point with the largest expanded uncertainty in the equilibrium table: data set "
                  "{}, step {} ({}), {}, {}, RH {}; specimens {}. Moisture content {} (k = {}). "
                  "Budget per JCGM 100:2008 (law of propagation); results.json holds the "
                  "budget of every point.",
                  worst->dataset_id, worst->step_index + 1, worst->step_label,
                  BranchLabel(worst->branch), TemperatureLabel(worst->temperature_K), rh.text,
                  specimens.empty() ? "–" : specimens, moisture.text,
                  CoverageText(moisture.coverage_factor)),
      8.0);
  const double ms = ctx.moisture_scale();
  const std::string mu = ctx.sheet.moisture_unit;
  double u2 = 0.0;
  for (const reduce::BudgetLine& b : budget.moisture) u2 += b.contribution * b.contribution;
  std::vector<std::vector<std::string>> rows;
  for (const reduce::BudgetLine& b : budget.moisture) {
    rows.push_back({b.quantity, FormatSignificant(b.contribution * ms, 2),
                    u2 > 0.0 ? FormatFixed(100.0 * b.contribution * b.contribution / u2, 1) : "–"});
  }
  rows.push_back({"combined standard uncertainty u_c",
                  FormatSignificant(moisture.standard_uncertainty * ms, 2), "100.0"});
  rows.push_back(
      {"expanded uncertainty U = k u_c (k = " + CoverageText(moisture.coverage_factor) + ")",
       FormatSignificant(moisture.display_expanded_uncertainty, 2), ""});
  const double w = doc.width();
  doc.Table({{"Component (aggregated over the specimens of the step)", w * 0.56, false},
             {"Contribution to u_c (" + mu + ")", w * 0.24, true},
             {"Share of u_c² (%)", w * 0.20, true}},
            rows, 7.5);
}

void MethodSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.NewPageIfUsed();
  doc.Heading(ctx.NumberedHeading("method", "Method and traceability"));
  const ingest::IngestResult* in = ctx.inputs.ingested;
  doc.Subheading("Procedure");
  if (in != nullptr) {
    for (const ingest::DataSetSpec& d : in->job.datasets) {
      doc.Paragraph(fmt::format("Data set {}: {} at {} nominal, file {}.", d.id,
                                d.method == ingest::Method::kDesiccator
                                    ? "specimens weighed at intervals in closed desiccators above "
                                      "saturated salt solutions"
                                    : "continuous mass and RH log of one specimen in a humidity-"
                                      "controlled balance (" +
                                          d.specimen_id + ")",
                                TemperatureLabel(d.temperature_K), d.file_as_written),
                    8.0);
    }
  }
  const auto& settings = ctx.inputs.effective_settings;
  if (settings.is_object() && settings.contains("equilibrium") &&
      settings["equilibrium"].is_object()) {
    std::string criteria;
    for (auto it = settings["equilibrium"].begin(); it != settings["equilibrium"].end(); ++it) {
      criteria += (criteria.empty() ? "" : ", ") + it.key() + " = " + SettingText(it.value());
    }
    doc.Paragraph("Equilibrium criteria: " + criteria + ".", 8.0);
  } else {
    doc.Paragraph(
        "Equilibrium criteria: as recorded under \"settings\" below (constant mass per "
        "ISO 12571 for desiccator series; rate of mass change for mass logs).",
        8.0);
  }
  doc.Subheading("Dry mass");
  if (ctx.inputs.equilibria != nullptr) {
    std::vector<std::vector<std::string>> rows;
    for (const equilibrate::DryMass& d : ctx.inputs.equilibria->dry_masses) {
      rows.push_back({d.specimen_id, FormatFixed(d.mass_g, 4) + " g",
                      d.u_mass_g > 0.0 ? FormatSignificant(d.u_mass_g, 2) + " g" : "balance only",
                      d.method + (d.equilibrated ? "" : " (not at constant mass)")});
    }
    const double w = doc.width();
    doc.Table({{"Specimen", w * 0.15, false},
               {"Dry mass", w * 0.15, true},
               {"u (extra)", w * 0.15, true},
               {"Method", w * 0.55, false}},
              rows, 7.5);
  }
  BudgetOfLargestPoint(ctx);
  doc.Subheading("Inputs (SHA-256)");
  if (in != nullptr) {
    std::vector<std::vector<std::string>> rows;
    for (const ingest::InputFileRecord& f : in->inputs) rows.push_back({f.role, f.path, f.sha256});
    const double w = doc.width();
    doc.Table({{"Role", w * 0.12, false}, {"File", w * 0.30, false}, {"SHA-256", w * 0.58, false}},
              rows, 6.5);
  }
  doc.Subheading("Software and settings");
  doc.Paragraph("sorbtrace " + PlainVersion(ctx.inputs.software_version) + "; template \"" +
                    ctx.layout.name + "\". All settings after overrides:",
                8.0);
  // Settings flattened to "section.key = value" lines.
  std::vector<std::string> lines;
  std::function<void(const nlohmann::ordered_json&, const std::string&)> flatten =
      [&](const nlohmann::ordered_json& j, const std::string& prefix) {
        if (j.is_object()) {
          for (auto it = j.begin(); it != j.end(); ++it) {
            flatten(it.value(), prefix.empty() ? it.key() : prefix + "." + it.key());
          }
        } else {
          lines.push_back(prefix + " = " + SettingText(j));
        }
      };
  if (!settings.is_null()) flatten(settings, "");
  for (const std::string& line : lines) doc.Paragraph(line, 7.0, 8.0, palette::kSlate);
  doc.Skip(6.0);
  doc.Paragraph("The results apply to the specimens tested.", 8.5, 0.0, palette::kInk, true);
}

void CautionsSection(Context& ctx) {
  Document& doc = ctx.doc;
  doc.EnsureSpace(200.0);
  doc.Heading(ctx.NumberedHeading("cautions", "Cautions"));
  doc.Bullets(ctx.sheet.standing_cautions, 8.5);
  if (!ctx.sheet.cautions.empty()) {
    doc.Subheading("Notes on this data set");
    doc.Bullets(ctx.sheet.cautions, 8.0);
  }
}

}  // namespace

ReportArtifacts ComposeReport(const ReportInputs& inputs, const Template& layout,
                              const ReportOptions& options) {
  const Sheet sheet = BuildSheet(inputs, layout);
  std::string report_number = "draft";
  if (inputs.ingested != nullptr && !inputs.ingested->job.job_id.empty()) {
    report_number = PrintedField(inputs.ingested->job.job_id, kMaxReportNumberChars);
  }
  Document doc(layout, options, report_number, PlainVersion(inputs.software_version));
  Context ctx{inputs, layout, options, sheet, doc};
  doc.NewPage();
  if (layout.compact) {
    doc.set_allow_new_pages(false);
    SummarySection(ctx, true);
  } else {
    for (const std::string& section : layout.sections) {
      if (section == "summary") {
        SummarySection(ctx, false);
      } else if (section == "isotherm") {
        IsothermSection(ctx);
      } else if (section == "models") {
        ModelsSection(ctx);
      } else if (section == "pores") {
        PoresSection(ctx);
      } else if (section == "kinetics") {
        KineticsSection(ctx);
      } else if (section == "equilibria") {
        EquilibriaSection(ctx);
      } else if (section == "method") {
        MethodSection(ctx);
      } else if (section == "cautions") {
        CautionsSection(ctx);
      }
    }
  }
  ReportArtifacts artifacts;
  artifacts.warnings = sheet.warnings;
  artifacts.num_pages = doc.num_pages();
  artifacts.pdf = doc.Finish();
  artifacts.results_json =
      BuildResultsJson(inputs, layout, options, sheet, artifacts.num_pages)
          .dump(2, ' ', false, nlohmann::ordered_json::error_handler_t::replace) +
      "\n";
  artifacts.csv_files = BuildCsvFiles(inputs, sheet);
  return artifacts;
}

}  // namespace sorbtrace::report
