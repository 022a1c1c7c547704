// Unit tests of the fitting engine (fitters/fitter.h) against closed forms: weighted linear
// least squares, classical regression bands, Deming regression, the runs-test formulas, and
// the guard rails (too few points, singular Jacobian, bounds, bad input).
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>
#include <stdexcept>

#include "fitters/autodiff_model.h"
#include "fitters/fitter.h"
#include "fitters/internal/fit_workspace.h"
#include "fitters/internal/random.h"
#include "fitters/internal/statistics.h"
#include "fitters/registry.h"
#include "tests/models/synthetic.h"

namespace sorbtrace::fitters {
namespace {

ModelInfo SimpleInfo(const std::string& name, std::vector<std::string> names) {
  ModelInfo info;
  info.name = name;
  for (const std::string& n : names) {
    ParameterSpec spec;
    spec.name = n;
    spec.unit = "1";
    info.parameters.push_back(spec);
  }
  return info;
}

// y = a + b x.
struct Line {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() { return SimpleInfo("line", {"a", "b"}); }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    return p[0] + p[1] * x[0];
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{0.0, 0.0}};
  }
  static std::vector<std::string> PhysicalFlags(const double* p) {
    if (p[1] < 0.0) return {"slope b < 0"};
    return {};
  }
};

// y = a b x: only the product is identifiable (rank-deficient Jacobian).
struct Product {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() { return SimpleInfo("product", {"a", "b"}); }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    return p[0] * p[1] * x[0];
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{1.0, 1.0}};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

// y = a exp(-k x) with k bounded above by 0.1.
struct BoundedDecay {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() {
    ModelInfo info = SimpleInfo("decay", {"a", "k"});
    info.parameters[1].lower_bound = 0.0;
    info.parameters[1].upper_bound = 0.1;
    return info;
  }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    using std::exp;
    return p[0] * exp(-p[1] * x[0]);
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{1.0, 0.05}};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

// Invented data, roughly y = 1 + 2x with scatter; sigma_y differ to exercise the weights.
std::vector<Observation> LineData() {
  const double x[] = {0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0};
  const double y[] = {1.10, 2.85, 5.20, 6.90, 9.15, 10.80, 13.30, 14.95};
  const double sigma[] = {0.1, 0.2, 0.1, 0.3, 0.2, 0.1, 0.4, 0.2};
  std::vector<Observation> data;
  for (int i = 0; i < 8; ++i) {
    Observation o;
    o.x = {x[i], 0.0};
    o.y = y[i];
    o.sigma_y = sigma[i];
    data.push_back(o);
  }
  return data;
}

// Weighted least squares by the normal equations: beta = (X'WX)^-1 X'Wy (e.g. N. R. Draper,
// H. Smith, Applied Regression Analysis, 3rd ed., Wiley 1998, sec. 9.2).
struct ClosedFormLine {
  Eigen::Vector2d beta;
  Eigen::Matrix2d inverse_normal;  // (X'WX)^-1
  double weighted_ssr = 0.0;
};
ClosedFormLine SolveLine(const std::vector<Observation>& data) {
  Eigen::MatrixXd X(data.size(), 2);
  Eigen::VectorXd y(data.size()), w(data.size());
  for (std::size_t i = 0; i < data.size(); ++i) {
    X(static_cast<Eigen::Index>(i), 0) = 1.0;
    X(static_cast<Eigen::Index>(i), 1) = data[i].x[0];
    y(static_cast<Eigen::Index>(i)) = data[i].y;
    w(static_cast<Eigen::Index>(i)) = 1.0 / (data[i].sigma_y * data[i].sigma_y);
  }
  ClosedFormLine c;
  const Eigen::Matrix2d normal = X.transpose() * w.asDiagonal() * X;
  c.inverse_normal = normal.inverse();
  c.beta = c.inverse_normal * (X.transpose() * w.asDiagonal() * y);
  const Eigen::VectorXd r = y - X * c.beta;
  c.weighted_ssr = r.dot(w.asDiagonal() * r);
  return c;
}

// A model whose starting points throw: a std::logic_error stands for a bug and must leave
// FitModel (the run stage maps it to exit code 70); a std::domain_error stands for a
// numerical failure and becomes a failed fit with the message.
template <typename Thrown>
struct ThrowingStart : Line {
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    throw Thrown("thrown by the starting points");
  }
};

TEST(FitModelTest, BugInAModelIsNotSwallowed) {
  const auto model = MakeAutoDiffModel<ThrowingStart<std::logic_error>>();
  EXPECT_THROW(FitModel(*model, LineData(), ModelContext{}, FitOptions{}), std::logic_error);
  const auto out_of_range = MakeAutoDiffModel<ThrowingStart<std::out_of_range>>();
  EXPECT_THROW(FitModel(*out_of_range, LineData(), ModelContext{}, FitOptions{}),
               std::out_of_range);
}

TEST(FitModelTest, NumericalFailureBecomesAFailedFit) {
  const auto model = MakeAutoDiffModel<ThrowingStart<std::domain_error>>();
  const FitResult fit = FitModel(*model, LineData(), ModelContext{}, FitOptions{});
  EXPECT_EQ(fit.summary.termination, FitTermination::kFailure);
  EXPECT_EQ(fit.summary.message, "numerical failure in the fit: thrown by the starting points");
}

TEST(FitModelTest, WeightedLineMatchesNormalEquations) {
  const auto model = MakeAutoDiffModel<Line>();
  const std::vector<Observation> data = LineData();
  const ClosedFormLine exact = SolveLine(data);
  const FitResult fit = FitModel(*model, data, ModelContext{}, FitOptions{});
  ASSERT_TRUE(fit.ok()) << fit.summary.BriefReport();
  ASSERT_TRUE(fit.summary.covariance_available);
  EXPECT_NEAR(fit.parameters[0], exact.beta(0), 1e-10);
  EXPECT_NEAR(fit.parameters[1], exact.beta(1), 1e-10);
  const double s2 = exact.weighted_ssr / 6.0;  // n - p = 8 - 2
  for (int a = 0; a < 2; ++a) {
    for (int b = 0; b < 2; ++b) {
      EXPECT_NEAR(fit.covariance(a, b), s2 * exact.inverse_normal(a, b),
                  1e-10 * std::abs(s2 * exact.inverse_normal(a, a)));
    }
  }
  EXPECT_NEAR(fit.statistics.weighted_ssr, exact.weighted_ssr, 1e-10 * exact.weighted_ssr);
  EXPECT_EQ(fit.statistics.degrees_of_freedom, 6);
  EXPECT_NEAR(fit.correlation(0, 1),
              exact.inverse_normal(0, 1) /
                  std::sqrt(exact.inverse_normal(0, 0) * exact.inverse_normal(1, 1)),
              1e-10);
  EXPECT_DOUBLE_EQ(fit.correlation(0, 0), 1.0);
  // Student-t, 6 degrees of freedom, 97.5 % quantile = 2.446912 (e.g. NIST/SEMATECH
  // e-Handbook of Statistical Methods, table 1.4.7.2 "Critical values of Student's t").
  EXPECT_NEAR(fit.coverage_factor, 2.446912, 1e-6);
  EXPECT_NEAR(fit.estimates[1].interval_high - fit.estimates[1].value,
              2.446912 * std::sqrt(s2 * exact.inverse_normal(1, 1)), 1e-6);
  EXPECT_NE(fit.summary.covariance_convention.find("relative"), std::string::npos);
  // Information criteria in the documented least-squares form.
  const double n = 8.0, k = 2.0;
  const double aic = n * std::log(exact.weighted_ssr / n) + 2.0 * k;
  EXPECT_NEAR(fit.statistics.aic, aic, 1e-9);
  EXPECT_NEAR(fit.statistics.aicc, aic + 2.0 * k * (k + 1.0) / (n - k - 1.0), 1e-9);
  EXPECT_NEAR(fit.statistics.bic, n * std::log(exact.weighted_ssr / n) + k * std::log(n), 1e-9);
  EXPECT_TRUE(fit.summary.flags.empty()) << fit.summary.BriefReport();
}

TEST(FitModelTest, AbsoluteConventionKeepsUnscaledCovarianceAndChiSquare) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  data.resize(4);  // 2 degrees of freedom: P(chi2_2 >= q) = exp(-q / 2) exactly
  const ClosedFormLine exact = SolveLine(data);
  FitOptions options;
  options.weights = WeightConvention::kAbsolute;
  const FitResult fit = FitModel(*model, data, ModelContext{}, options);
  ASSERT_TRUE(fit.ok());
  EXPECT_NEAR(fit.covariance(1, 1), exact.inverse_normal(1, 1), 1e-10 * exact.inverse_normal(1, 1));
  EXPECT_NEAR(fit.statistics.chi_square_p_value, std::exp(-exact.weighted_ssr / 2.0), 1e-10);
  // Normal 97.5 % quantile 1.959964 (standard normal table).
  EXPECT_NEAR(fit.coverage_factor, 1.959964, 1e-6);
  EXPECT_NE(fit.summary.covariance_convention.find("absolute"), std::string::npos);
}

// Classical straight-line bands (Draper & Smith 1998, sec. 3.1): with s^2 = SSR/(n-2),
//   confidence half-width t s sqrt(1/n + (x - xbar)^2 / Sxx),
//   prediction half-width t s sqrt(1 + 1/n + (x - xbar)^2 / Sxx).
TEST(DeltaMethodBandTest, MatchesClosedFormLinearRegressionBands) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  for (Observation& o : data) o.sigma_y = 1.0;
  const FitResult fit = FitModel(*model, data, ModelContext{}, FitOptions{});
  ASSERT_TRUE(fit.ok());
  const double n = static_cast<double>(data.size());
  double xbar = 0.0;
  for (const Observation& o : data) xbar += o.x[0] / n;
  double sxx = 0.0;
  for (const Observation& o : data) sxx += (o.x[0] - xbar) * (o.x[0] - xbar);
  const double s = fit.statistics.residual_std;
  const double t = 2.446912;  // Student-t 97.5 %, 6 dof (NIST/SEMATECH e-Handbook table)
  const std::vector<double> grid = {-1.0, 0.0, 3.5, 7.0, 10.0};
  const std::vector<BandPoint> band = DeltaMethodBand(*model, fit, ModelContext{}, grid, 0.95);
  ASSERT_EQ(band.size(), grid.size());
  for (const BandPoint& b : band) {
    const double lever = 1.0 / n + (b.x - xbar) * (b.x - xbar) / sxx;
    EXPECT_NEAR(b.y, fit.parameters[0] + fit.parameters[1] * b.x, 1e-12);
    EXPECT_NEAR(b.confidence_high - b.y, t * s * std::sqrt(lever), 1e-6);
    EXPECT_NEAR(b.y - b.confidence_low, t * s * std::sqrt(lever), 1e-6);
    EXPECT_NEAR(b.prediction_high - b.y, t * s * std::sqrt(1.0 + lever), 1e-6);
  }
}

// Known sign sequences, values by hand from the Wald-Wolfowitz formulas (NIST/SEMATECH
// e-Handbook of Statistical Methods, sec. 1.3.5.13): n1 = n2 = 10 gives mu = 11,
// var = 2*10*10*(200-20)/(20^2*19) = 4.7368421, so R = 20 -> z = 4.135215, p = 3.5462e-5.
TEST(RunsTest, KnownSequences) {
  std::vector<double> alternating;
  for (int i = 0; i < 20; ++i) alternating.push_back(i % 2 == 0 ? 1.0 : -1.0);
  const internal::RunsTestResult a = internal::WaldWolfowitzRunsTest(alternating);
  EXPECT_EQ(a.runs, 20);
  EXPECT_EQ(a.num_positive, 10);
  EXPECT_NEAR(a.z, 4.135215, 1e-6);
  EXPECT_NEAR(a.p_value, 3.5462e-5, 1e-8);

  std::vector<double> clustered(10, 1.0);
  clustered.insert(clustered.end(), 10, -2.0);
  const internal::RunsTestResult c = internal::WaldWolfowitzRunsTest(clustered);
  EXPECT_EQ(c.runs, 2);
  EXPECT_NEAR(c.z, -4.135215, 1e-6);

  // + + - - - + - + + - : R = 6, n1 = n2 = 5, mu = 6 -> z = 0, p = 1. A zero is skipped.
  const std::vector<double> random_like = {1, 2, -1, -3, 0, -1, 4, -2, 1, 1, -5};
  const internal::RunsTestResult r = internal::WaldWolfowitzRunsTest(random_like);
  EXPECT_EQ(r.runs, 6);
  EXPECT_TRUE(r.defined);
  EXPECT_NEAR(r.z, 0.0, 1e-12);
  EXPECT_NEAR(r.p_value, 1.0, 1e-12);

  const internal::RunsTestResult one_sign = internal::WaldWolfowitzRunsTest({1.0, 2.0, 3.0});
  EXPECT_FALSE(one_sign.defined);
  EXPECT_EQ(one_sign.p_value, 1.0);
}

TEST(FitModelTest, BoundsAreRespectedAndFlagged) {
  const auto model = MakeAutoDiffModel<BoundedDecay>();
  std::vector<Observation> data;
  for (int i = 0; i < 10; ++i) {  // invented: y = 2 exp(-0.5 x), true k outside [0, 0.1]
    Observation o;
    o.x = {0.5 * i, 0.0};
    o.y = 2.0 * std::exp(-0.5 * o.x[0]);
    data.push_back(o);
  }
  const FitResult fit = FitModel(*model, data, ModelContext{}, FitOptions{});
  ASSERT_EQ(fit.parameters.size(), 2u) << fit.summary.BriefReport();
  EXPECT_LE(fit.parameters[1], 0.1);
  EXPECT_NEAR(fit.parameters[1], 0.1, 1e-12);
  EXPECT_TRUE(fit.estimates[1].at_bound);
  EXPECT_FALSE(fit.estimates[0].at_bound);
  bool flagged = false;
  for (const std::string& f : fit.summary.flags)
    flagged |= f.find("at its bound") != std::string::npos;
  EXPECT_TRUE(flagged) << fit.summary.BriefReport();
  for (const StartReport& s : fit.summary.starts) {
    EXPECT_GE(s.solution[1], 0.0);
    EXPECT_LE(s.solution[1], 0.1);
  }
}

TEST(FitModelTest, TooFewPointsIsReportedNotCrashed) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  data.resize(2);
  const FitResult two = FitModel(*model, data, ModelContext{}, FitOptions{});
  EXPECT_EQ(two.summary.termination, FitTermination::kTooFewPoints);
  EXPECT_FALSE(two.ok());
  EXPECT_FALSE(two.summary.flags.empty());
  const FitResult none = FitModel(*model, {}, ModelContext{}, FitOptions{});
  EXPECT_EQ(none.summary.termination, FitTermination::kTooFewPoints);
}

TEST(FitModelTest, SingularJacobianIsFlagged) {
  const auto model = MakeAutoDiffModel<Product>();
  std::vector<Observation> data = LineData();
  for (Observation& o : data) o.y = 3.0 * o.x[0] + 0.01 * (o.x[0] - 3.0);
  const FitResult fit = FitModel(*model, data, ModelContext{}, FitOptions{});
  EXPECT_FALSE(fit.summary.covariance_available);
  bool flagged = false;
  for (const std::string& f : fit.summary.flags) {
    flagged |= f.find("covariance unavailable") != std::string::npos;
  }
  EXPECT_TRUE(flagged) << fit.summary.BriefReport();
  ASSERT_EQ(fit.estimates.size(), 2u);
  EXPECT_TRUE(std::isnan(fit.estimates[0].standard_error));
  // The identifiable product is still fitted.
  EXPECT_NEAR(fit.parameters[0] * fit.parameters[1], SolveLine(data).beta(1), 0.1);
}

// A fit without a covariance (only a * b is determined) is not resampled: the refits could only
// drift along the undetermined direction a -> c a, b -> b / c, so their percentiles would
// describe the solver. Every kind returns no draws, all counted as failed, and says why.
TEST(ResampleTest, RankDeficientFitIsNotResampled) {
  const auto model = MakeAutoDiffModel<Product>();
  std::vector<Observation> data = LineData();
  for (Observation& o : data) o.y = 3.0 * o.x[0] + 0.01 * (o.x[0] - 3.0);
  const FitOptions fit_options;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok()) << fit.summary.BriefReport();
  ASSERT_FALSE(fit.summary.covariance_available);
  for (ResampleKind kind : {ResampleKind::kResidualBootstrap, ResampleKind::kCaseBootstrap,
                            ResampleKind::kMonteCarloInputs}) {
    ResampleOptions options;
    options.kind = kind;
    options.num_resamples = 40;
    const ResampleResult r = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    EXPECT_TRUE(r.parameter_draws.empty());
    EXPECT_EQ(r.num_failed, 40);
    EXPECT_EQ(r.refit_iterations, 0);
    EXPECT_NE(r.not_formed.find("no covariance"), std::string::npos) << r.not_formed;
    ASSERT_EQ(r.parameter_low.size(), 2u);
    EXPECT_TRUE(std::isnan(r.parameter_low[0]));
  }
  // A fit with a covariance is resampled and says nothing.
  const auto line = MakeAutoDiffModel<Line>();
  const FitResult line_fit = FitModel(*line, data, ModelContext{}, fit_options);
  ASSERT_TRUE(line_fit.summary.covariance_available);
  ResampleOptions options;
  options.num_resamples = 40;
  const ResampleResult r = Resample(*line, data, ModelContext{}, line_fit, fit_options, options);
  EXPECT_TRUE(r.not_formed.empty());
  EXPECT_EQ(static_cast<int>(r.parameter_draws.size()) + r.num_failed, 40);
  EXPECT_GT(r.parameter_draws.size(), 30u);
}

TEST(FitModelTest, BadInputAndOptionsAreReportedNotCrashed) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  data[3].sigma_y = 0.0;
  EXPECT_EQ(FitModel(*model, data, ModelContext{}, FitOptions{}).summary.termination,
            FitTermination::kFailure);
  data = LineData();
  data[2].y = std::nan("");
  EXPECT_EQ(FitModel(*model, data, ModelContext{}, FitOptions{}).summary.termination,
            FitTermination::kFailure);
  FitOptions bad;
  bad.confidence_level = 1.5;
  std::string error;
  EXPECT_FALSE(bad.IsValid(&error));
  EXPECT_FALSE(error.empty());
  EXPECT_EQ(FitModel(*model, LineData(), ModelContext{}, bad).summary.termination,
            FitTermination::kFailure);
  FitOptions wrong_start;
  wrong_start.starting_points = {{1.0, 2.0, 3.0}};  // p = 2
  EXPECT_EQ(FitModel(*model, LineData(), ModelContext{}, wrong_start).summary.termination,
            FitTermination::kFailure);
}

// A model whose bounds are contradictory (lower > upper) is a programming error in the
// model; the engine must report it, not abort.
struct InvertedBounds {
  static constexpr int kNumParameters = 1;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() {
    ModelInfo info = SimpleInfo("inverted", {"a"});
    info.parameters[0].lower_bound = 1.0;
    info.parameters[0].upper_bound = 0.0;
    return info;
  }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    return p[0] * x[0];
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{0.5}};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

TEST(FitModelTest, ContradictoryBoundsAreReportedNotCrashed) {
  const auto model = MakeAutoDiffModel<InvertedBounds>();
  const FitResult fit = FitModel(*model, LineData(), ModelContext{}, FitOptions{});
  EXPECT_FALSE(fit.ok());
  EXPECT_FALSE(fit.summary.flags.empty()) << fit.summary.BriefReport();
}

TEST(FitModelTest, MultiStartsAreDeterministicAndAllReported) {
  const auto model = MakeAutoDiffModel<Line>();
  FitOptions options;
  options.num_multistarts = 3;
  const FitResult a = FitModel(*model, LineData(), ModelContext{}, options);
  const FitResult b = FitModel(*model, LineData(), ModelContext{}, options);
  ASSERT_EQ(a.summary.starts.size(), 4u);  // 1 model start + 3 perturbations
  EXPECT_EQ(a.summary.starts_tried, 4);
  for (std::size_t i = 0; i < a.summary.starts.size(); ++i) {
    EXPECT_EQ(a.summary.starts[i].start, b.summary.starts[i].start);
    EXPECT_EQ(a.summary.starts[i].solution, b.summary.starts[i].solution);
  }
  EXPECT_EQ(a.parameters, b.parameters);
}

TEST(FitModelTest, PhysicalFlagsOfTheModelAreReported) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  for (Observation& o : data) o.y = 10.0 - o.y;  // negative slope
  const FitResult fit = FitModel(*model, data, ModelContext{}, FitOptions{});
  ASSERT_TRUE(fit.ok());
  bool flagged = false;
  for (const std::string& f : fit.summary.flags) flagged |= f == "physics: slope b < 0";
  EXPECT_TRUE(flagged) << fit.summary.BriefReport();
}

// Errors in variables for a line with constant sigma_x, sigma_y is Deming regression, closed
// form with lambda = sigma_y^2 / sigma_x^2 (W. E. Deming, Statistical Adjustment of Data,
// Wiley 1943; P. J. Cornbleet, N. Gochman, Clin. Chem. 25 (1979) 432-438):
//   b = (Syy - lambda Sxx + sqrt((Syy - lambda Sxx)^2 + 4 lambda Sxy^2)) / (2 Sxy),
//   a = ybar - b xbar.
TEST(FitModelTest, ErrorsInVariablesLineIsDemingRegression) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data = LineData();
  for (Observation& o : data) {
    o.sigma_y = 0.3;
    o.sigma_x0 = 0.2;
  }
  data[2].x[0] += 0.25;  // invented x errors
  data[5].x[0] -= 0.3;
  FitOptions options;
  options.errors_in_variables = true;
  const FitResult fit = FitModel(*model, data, ModelContext{}, options);
  ASSERT_TRUE(fit.ok()) << fit.summary.BriefReport();
  const double n = static_cast<double>(data.size());
  double xbar = 0.0, ybar = 0.0;
  for (const Observation& o : data) {
    xbar += o.x[0] / n;
    ybar += o.y / n;
  }
  double sxx = 0.0, syy = 0.0, sxy = 0.0;
  for (const Observation& o : data) {
    sxx += (o.x[0] - xbar) * (o.x[0] - xbar);
    syy += (o.y - ybar) * (o.y - ybar);
    sxy += (o.x[0] - xbar) * (o.y - ybar);
  }
  const double lambda = (0.3 * 0.3) / (0.2 * 0.2);
  const double d = syy - lambda * sxx;
  const double slope = (d + std::sqrt(d * d + 4.0 * lambda * sxy * sxy)) / (2.0 * sxy);
  EXPECT_NEAR(fit.parameters[1], slope, 1e-9);
  EXPECT_NEAR(fit.parameters[0], ybar - slope * xbar, 1e-9);
  EXPECT_NE(fit.fitted_x0[2], data[2].x[0]);  // true x moved off the observed x
  EXPECT_EQ(fit.x0_is_fitted, std::vector<char>(data.size(), 1));  // every sigma_x0 > 0
  // The residuals a reader re-derives: y - f(x) at the observed x (the Deming line above), and
  // rmse from them; the residuals at the fitted x are what the objective saw (smaller).
  double ssr_observed = 0.0, ssr_fitted = 0.0;
  for (std::size_t i = 0; i < data.size(); ++i) {
    const double at_observed = data[i].y - (fit.parameters[0] + fit.parameters[1] * data[i].x[0]);
    EXPECT_NEAR(fit.residuals_at_observed_x[i], at_observed, 1e-12);
    ssr_observed += at_observed * at_observed;
    ssr_fitted += fit.residuals[i] * fit.residuals[i];
  }
  EXPECT_NEAR(fit.statistics.rmse, std::sqrt(ssr_observed / n), 1e-12);
  EXPECT_LT(ssr_fitted, ssr_observed);
}

// The errors-in-variables rule (fitter.h, ErrorsInVariablesMask): a point's x[0] is fitted only
// with the option on and a stated uncertainty; an exact x[0] (sigma_x0 = 0) stays observed, and
// the fit carries the mask it used.
TEST(FitModelTest, ErrorsInVariablesMaskIsOnePerPoint) {
  std::vector<Observation> data(3);
  data[0].sigma_x0 = 0.01;
  data[2].sigma_x0 = 1e-9;
  FitOptions options;
  EXPECT_EQ(ErrorsInVariablesMask(data, options), std::vector<char>({0, 0, 0}));
  options.errors_in_variables = true;
  EXPECT_EQ(ErrorsInVariablesMask(data, options), std::vector<char>({1, 0, 1}));
}

TEST(FitModelTest, RobustLossResistsAnOutlier) {
  const auto model = MakeAutoDiffModel<Line>();
  std::vector<Observation> data;
  for (int i = 0; i < 12; ++i) {  // invented: exact y = 1 + 2x, one gross outlier
    Observation o;
    o.x = {static_cast<double>(i), 0.0};
    o.y = 1.0 + 2.0 * i + (i % 3 == 0 ? 0.05 : -0.03);
    o.sigma_y = 0.05;
    data.push_back(o);
  }
  data[9].y += 5.0;
  FitOptions squared;
  FitOptions robust;
  robust.loss = LossKind::kCauchy;
  robust.loss_scale = 2.0;
  const FitResult a = FitModel(*model, data, ModelContext{}, squared);
  const FitResult b = FitModel(*model, data, ModelContext{}, robust);
  ASSERT_TRUE(a.ok());
  ASSERT_TRUE(b.ok());
  EXPECT_LT(std::abs(b.parameters[1] - 2.0), 0.2 * std::abs(a.parameters[1] - 2.0));
  EXPECT_NE(b.summary.covariance_convention.find("Cauchy"), std::string::npos);
}

TEST(RandomTest, SameStateSameDrawsAndSaneMoments) {
  internal::Random a(42), b(42), c(43);
  std::vector<double> da, db, dc;
  for (int i = 0; i < 1000; ++i) {
    da.push_back(a.Normal());
    db.push_back(b.Normal());
    dc.push_back(c.Normal());
  }
  EXPECT_EQ(da, db);
  EXPECT_NE(da, dc);
  internal::Random r(7);
  const int count = 200000;
  double sum = 0.0, sum2 = 0.0;
  for (int i = 0; i < count; ++i) {
    const double z = r.Normal();
    sum += z;
    sum2 += z * z;
  }
  // Standard errors of mean and variance: 1/sqrt(N) = 0.0022 and sqrt(2/N) = 0.0032;
  // bounds at about 5 of them.
  EXPECT_NEAR(sum / count, 0.0, 0.011);
  EXPECT_NEAR(sum2 / count, 1.0, 0.016);
  for (int i = 0; i < 1000; ++i) {
    const std::size_t k = r.Index(7);
    EXPECT_LT(k, 7u);
    const double u = r.Uniform();
    EXPECT_GE(u, 0.0);
    EXPECT_LT(u, 1.0);
  }
}

TEST(ResampleTest, SameRandomStateGivesIdenticalDraws) {
  const auto model = MakeAutoDiffModel<Line>();
  const std::vector<Observation> data = LineData();
  const FitOptions fit_options;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok());
  for (ResampleKind kind : {ResampleKind::kResidualBootstrap, ResampleKind::kCaseBootstrap,
                            ResampleKind::kMonteCarloInputs}) {
    ResampleOptions options;
    options.kind = kind;
    options.num_resamples = 60;
    const ResampleResult a = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    const ResampleResult b = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    options.seed += 1;
    const ResampleResult c = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    EXPECT_EQ(a.parameter_draws, b.parameter_draws);
    EXPECT_EQ(a.parameter_low, b.parameter_low);
    EXPECT_NE(a.parameter_draws, c.parameter_draws);
    EXPECT_EQ(static_cast<int>(a.parameter_draws.size()) + a.num_failed, 60);
    EXPECT_LT(a.parameter_low[1], fit.parameters[1]);
    EXPECT_GT(a.parameter_high[1], fit.parameters[1]);
    EXPECT_LT(a.parameter_low[0], a.parameter_high[0]);
  }
}

// For a straight line the fit is linear in y, so Monte Carlo propagation of the stated
// uncertainties (absolute convention) must reproduce (X'WX)^-1 up to sampling error
// (JCGM 101:2008, sec. 7: agreement with the law of propagation for linear models).
TEST(ResampleTest, MonteCarloOnLineReproducesLinearPropagation) {
  const auto model = MakeAutoDiffModel<Line>();
  const std::vector<Observation> data = LineData();
  FitOptions fit_options;
  fit_options.weights = WeightConvention::kAbsolute;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok());
  ResampleOptions options;
  options.kind = ResampleKind::kMonteCarloInputs;
  options.num_resamples = 2000;
  const ResampleResult mc = Resample(*model, data, ModelContext{}, fit, fit_options, options);
  ASSERT_EQ(mc.num_failed, 0);
  const ClosedFormLine exact = SolveLine(data);
  // Relative standard error of a standard deviation from N draws: 1/sqrt(2N) = 1.6 %;
  // 8 % is 5 of them.
  EXPECT_NEAR(mc.parameter_u[0] / std::sqrt(exact.inverse_normal(0, 0)), 1.0, 0.08);
  EXPECT_NEAR(mc.parameter_u[1] / std::sqrt(exact.inverse_normal(1, 1)), 1.0, 0.08);
}

// A Model that only offers copying residuals: the engine must then rebuild its problem for
// every resampled data set, and get exactly the same answers as with in-place reuse.
class CopyOnlyModel final : public Model {
 public:
  explicit CopyOnlyModel(const Model& inner) : inner_(inner) {}
  const ModelInfo& info() const override { return inner_.info(); }
  int num_inputs() const override { return inner_.num_inputs(); }
  double Evaluate(const double* p, const double* x, const ModelContext& c) const override {
    return inner_.Evaluate(p, x, c);
  }
  void Gradient(const double* p, const double* x, const ModelContext& c, double* g) const override {
    inner_.Gradient(p, x, c, g);
  }
  double SlopeInX0(const double* p, const double* x, const ModelContext& c) const override {
    return inner_.SlopeInX0(p, x, c);
  }
  ceres::CostFunction* NewResidual(const Observation& o, const ModelContext& c) const override {
    return inner_.NewResidual(o, c);
  }
  ceres::CostFunction* NewErrorsInVariablesResidual(const Observation& o,
                                                    const ModelContext& c) const override {
    return inner_.NewErrorsInVariablesResidual(o, c);
  }
  std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>& o,
                                                  const ModelContext& c) const override {
    return inner_.StartingPoints(o, c);
  }
  std::vector<std::string> PhysicalFlags(const double* p) const override {
    return inner_.PhysicalFlags(p);
  }

 private:
  const Model& inner_;
};

// Invented: y = 2 exp(-0.05 x) with scatter; every other point has an x uncertainty (mixed,
// so the case bootstrap changes which points have a fitted true x).
std::vector<Observation> DecayDataWithSomeXErrors() {
  std::vector<Observation> data;
  for (int i = 0; i < 12; ++i) {
    Observation o;
    o.x = {1.0 * i, 0.0};
    o.y = 2.0 * std::exp(-0.05 * o.x[0]) + 0.01 * std::sin(3.0 * i);
    o.sigma_y = 0.01;
    o.sigma_x0 = i % 2 == 0 ? 0.1 : 0.0;
    data.push_back(o);
  }
  return data;
}

TEST(ResampleTest, InPlaceReuseEqualsRebuildingTheProblem) {
  const auto model = MakeAutoDiffModel<BoundedDecay>();
  const CopyOnlyModel copy_only(*model);
  const std::vector<Observation> data = DecayDataWithSomeXErrors();
  FitOptions fit_options;
  fit_options.errors_in_variables = true;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok()) << fit.summary.BriefReport();
  for (ResampleKind kind : {ResampleKind::kResidualBootstrap, ResampleKind::kCaseBootstrap,
                            ResampleKind::kMonteCarloInputs}) {
    ResampleOptions options;
    options.kind = kind;
    options.num_resamples = 40;
    const ResampleResult reuse = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    const ResampleResult rebuild =
        Resample(copy_only, data, ModelContext{}, fit, fit_options, options);
    ASSERT_EQ(reuse.parameter_draws.size(), rebuild.parameter_draws.size());
    EXPECT_GT(reuse.parameter_draws.size(), 30u);
    for (std::size_t d = 0; d < reuse.parameter_draws.size(); ++d) {
      for (std::size_t j = 0; j < 2; ++j) {
        EXPECT_NEAR(reuse.parameter_draws[d][j], rebuild.parameter_draws[d][j],
                    1e-9 * std::abs(rebuild.parameter_draws[d][j]) + 1e-12);
      }
    }
  }
}

// The covariance the bootstrap-t studentisation takes from the dense solver's kept Jacobian
// (Schur complement of the fitted true x[0]) must equal ceres::Covariance's parameter block
// at the same point, with and without errors in variables.
TEST(FitWorkspaceTest, LastSolveCovarianceEqualsCeresCovariance) {
  const auto model = MakeAutoDiffModel<BoundedDecay>();
  const std::vector<Observation> data = DecayDataWithSomeXErrors();
  for (bool eiv : {false, true}) {
    FitOptions options;
    options.errors_in_variables = eiv;
    internal::FitWorkspace workspace(*model, data, ModelContext{}, options);
    const internal::SolveOutcome outcome = workspace.Solve({1.5, 0.1}, nullptr);
    ASSERT_TRUE(outcome.converged) << outcome.message;
    EXPECT_TRUE(outcome.dense);
    Eigen::MatrixXd from_solver, from_ceres;
    double weighted_ssr = 0.0;
    ASSERT_TRUE(workspace.LastSolveCovariance(&from_solver, &weighted_ssr));
    std::string error;
    ASSERT_TRUE(workspace.ComputeCovariance(&from_ceres, &error)) << error;
    EXPECT_NEAR(weighted_ssr, 2.0 * outcome.cost, 1e-12 * weighted_ssr);
    for (int r = 0; r < 2; ++r) {
      for (int c = 0; c < 2; ++c) {
        EXPECT_NEAR(from_solver(r, c), from_ceres(r, c), 1e-6 * std::abs(from_ceres(r, r)))
            << "eiv " << eiv << " element " << r << "," << c;
      }
    }
  }
}

TEST(AutoDiffModelTest, GradientAndSlopeMatchAnalyticDerivatives) {
  const auto model = MakeAutoDiffModel<BoundedDecay>();
  const double p[2] = {2.0, 0.3};
  const double x[2] = {1.5, 0.0};
  double g[2];
  model->Gradient(p, x, ModelContext{}, g);
  const double e = std::exp(-0.3 * 1.5);
  EXPECT_NEAR(model->Evaluate(p, x, ModelContext{}), 2.0 * e, 1e-15);
  EXPECT_NEAR(g[0], e, 1e-15);               // d/da a exp(-k x) = exp(-k x)
  EXPECT_NEAR(g[1], -2.0 * 1.5 * e, 1e-15);  // d/dk = -a x exp(-k x)
  EXPECT_NEAR(model->SlopeInX0(p, x, ModelContext{}), -2.0 * 0.3 * e, 1e-15);
  EXPECT_EQ(model->num_parameters(), 2);
  EXPECT_EQ(model->name(), "decay");
}

// The invented GAB isotherm, 20 points with u(RH) = 0.005: the bimodal retention curve
// describes it only loosely (a sloppy fit, slow Gauss-Newton convergence).
std::vector<Observation> GabShapedIsothermWithRhErrors() {
  testing::GabScatterSpec spec;
  spec.num_points = 20;
  spec.wiggle_per_point = 2.3;
  spec.rh_uncertainty = 0.005;
  return testing::GabPointsWithRhErrors(spec);
}

// The statistical stopping rule of the refits (ResampleOptions::refit_tolerance_se): every
// draw must lie within a few tolerances (in full-data standard errors) of the same refit run
// to the tight function tolerance, with clearly fewer iterations; and the tolerance rule off
// must reproduce the tight refits exactly (it is the only difference).
TEST(ResampleTest, StandardErrorStoppingRuleKeepsDrawsNearTheTightOptimum) {
  const Model* model = FindModel("durner2");
  ASSERT_NE(model, nullptr);
  const std::vector<Observation> data = GabShapedIsothermWithRhErrors();
  FitOptions fit_options;
  fit_options.errors_in_variables = true;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok()) << fit.summary.BriefReport();
  ASSERT_TRUE(fit.summary.covariance_available);
  FitOptions refit = fit_options;
  refit.function_tolerance = 1e-13;
  refit.parameter_tolerance = 1e-13;
  ResampleOptions options;
  options.num_resamples = 150;
  options.refit_tolerance_se = 0.0;
  const ResampleResult tight = Resample(*model, data, ModelContext{}, fit, refit, options);
  options.refit_tolerance_se = 0.01;
  const ResampleResult loose = Resample(*model, data, ModelContext{}, fit, refit, options);
  ASSERT_EQ(tight.parameter_draws.size(), loose.parameter_draws.size());
  ASSERT_GT(tight.parameter_draws.size(), 140u);
  double worst_se = 0.0;
  std::vector<double> per_draw;
  for (std::size_t d = 0; d < tight.parameter_draws.size(); ++d) {
    double draw_worst = 0.0;
    for (std::size_t j = 0; j < fit.parameters.size(); ++j) {
      const double se = fit.estimates[j].standard_error;
      draw_worst = std::max(
          draw_worst, std::abs(loose.parameter_draws[d][j] - tight.parameter_draws[d][j]) / se);
    }
    worst_se = std::max(worst_se, draw_worst);
    per_draw.push_back(draw_worst);
  }
  std::sort(per_draw.begin(), per_draw.end());
  const double p95_se = per_draw[per_draw.size() * 95 / 100];
  std::printf(
      "durner2 refits: draw difference 95th percentile %.4f, worst %.4f standard errors; "
      "iterations %lld (rule) vs %lld (tight)\n",
      p95_se, worst_se, loose.refit_iterations, tight.refit_iterations);
  // 3 x the tolerance: the Gauss-Newton distance is an estimate. Measured with the
  // errors-in-variables bootstrap (draws as wide as the data, leverage-corrected residuals,
  // fitter.h): with one random stream for all draws 95th percentile 0.014, worst 0.026
  // standard errors; with a stream per draw (fitter.h) 95th percentile 0.015, 3 of the 150
  // draws beyond 0.03 and the worst 1.49 standard errors from the tight refit (the estimate
  // fails in a curved valley of this sloppy model; the demo jobs show such draws too, up to
  // 1.9 standard errors). So: 95 % of the draws within 3 x the tolerance, and the percentile
  // endpoints, which the few others barely move, within 0.05 standard errors.
  EXPECT_LE(p95_se, 0.03);
  EXPECT_GT(worst_se, 0.0);  // the rule did stop some refits early
  EXPECT_LT(loose.refit_iterations, 0.8 * tight.refit_iterations);
  for (std::size_t j = 0; j < fit.parameters.size(); ++j) {
    const double se = fit.estimates[j].standard_error;
    EXPECT_NEAR(loose.parameter_low[j], tight.parameter_low[j], 0.05 * se) << j;
    EXPECT_NEAR(loose.parameter_high[j], tight.parameter_high[j], 0.05 * se) << j;
  }
}

// Both step solvers of the dense solver reach the same optimum on a well-posed problem, with
// and without fitted true x[0].
TEST(FitWorkspaceTest, NormalCholeskyStepsReachTheQrOptimum) {
  const auto model = MakeAutoDiffModel<BoundedDecay>();
  const std::vector<Observation> data = DecayDataWithSomeXErrors();
  for (bool eiv : {false, true}) {
    std::vector<double> solutions[2];
    for (StepSolver solver : {StepSolver::kDenseQr, StepSolver::kDenseNormalCholesky}) {
      FitOptions options;
      options.errors_in_variables = eiv;
      options.step_solver = solver;
      internal::FitWorkspace workspace(*model, data, ModelContext{}, options);
      const internal::SolveOutcome outcome = workspace.Solve({1.5, 0.1}, nullptr);
      ASSERT_TRUE(outcome.converged) << outcome.message;
      EXPECT_TRUE(outcome.dense);
      solutions[solver == StepSolver::kDenseQr ? 0 : 1] = workspace.parameters();
    }
    for (std::size_t j = 0; j < 2; ++j) {
      EXPECT_NEAR(solutions[1][j], solutions[0][j], 1e-9 * std::abs(solutions[0][j])) << eiv;
    }
  }
}

TEST(FitOptionsTest, StoppingRuleSettingsAreChecked) {
  FitOptions options;
  std::string error;
  EXPECT_TRUE(options.IsValid(&error));
  options.scaled_step_tolerance = -0.1;
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_NE(error.find("scaled_step_tolerance"), std::string::npos) << error;
  options.scaled_step_tolerance = 0.01;
  options.parameter_scale = {1.0, 0.0};
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_NE(error.find("parameter_scale"), std::string::npos) << error;
  options.parameter_scale = {1.0, 2.0};
  EXPECT_TRUE(options.IsValid(&error)) << error;
}

}  // namespace
}  // namespace sorbtrace::fitters
