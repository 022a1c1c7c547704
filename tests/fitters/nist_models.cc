#include "tests/fitters/nist_models.h"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>
#include <stdexcept>

#include "fitters/autodiff_model.h"

namespace sorbtrace::fitters::nist {
namespace {

ModelInfo NistInfo(const std::string& name, int num_parameters, const std::string& equation) {
  ModelInfo info;
  info.name = name;
  info.title = "NIST StRD " + name;
  info.equation = equation;
  info.source = "NIST StRD, Statistical Engineering Division, ITL";
  info.x_quantity = "x";
  info.y_quantity = "y";
  for (int k = 1; k <= num_parameters; ++k) {
    ParameterSpec spec;
    spec.name = "b" + std::to_string(k);
    spec.unit = "1";
    info.parameters.push_back(spec);
  }
  return info;
}

template <int P, int I = 1>
struct NistEquation {
  static constexpr int kNumParameters = P;
  static constexpr int kNumInputs = I;
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

// The models, as printed in the StRD files (lines 31-40).
#define NIST_MODEL(NAME, P, EQUATION_TEXT, BODY)                          \
  struct NAME : NistEquation<P> {                                         \
    static ModelInfo Info() { return NistInfo(#NAME, P, EQUATION_TEXT); } \
    template <typename T>                                                 \
    static T Evaluate(const T* b, const T* xs, const ModelContext&) {     \
      using std::atan;                                                    \
      using std::cos;                                                     \
      using std::exp;                                                     \
      using std::pow;                                                     \
      using std::sin;                                                     \
      const T& x = xs[0];                                                 \
      BODY                                                                \
    }                                                                     \
  };

NIST_MODEL(Misra1a, 2, "y = b1*(1-exp[-b2*x])", return b[0] * (1.0 - exp(-b[1] * x));)
NIST_MODEL(Misra1b, 2, "y = b1 * (1-(1+b2*x/2)**(-2))",
           return b[0] * (1.0 - 1.0 / ((1.0 + b[1] * x / 2.0) * (1.0 + b[1] * x / 2.0)));)
NIST_MODEL(Misra1c, 2, "y = b1 * (1-(1+2*b2*x)**(-.5))",
           return b[0] * (1.0 - 1.0 / sqrt(1.0 + 2.0 * b[1] * x));)
NIST_MODEL(Misra1d, 2, "y = b1*b2*x*((1+b2*x)**(-1))", return b[0] * b[1] * x / (1.0 + b[1] * x);)
NIST_MODEL(Chwirut, 3, "y = exp[-b1*x]/(b2+b3*x)", return exp(-b[0] * x) / (b[1] + b[2] * x);)
NIST_MODEL(Lanczos, 6, "y = b1*exp(-b2*x) + b3*exp(-b4*x) + b5*exp(-b6*x)",
           return b[0] * exp(-b[1] * x) + b[2] * exp(-b[3] * x) + b[4] * exp(-b[5] * x);)
NIST_MODEL(Gauss, 8, "y = b1*exp(-b2*x) + b3*exp(-(x-b4)**2/b5**2) + b6*exp(-(x-b7)**2/b8**2)",
           return b[0] * exp(-b[1] * x) + b[2] * exp(-(x - b[3]) * (x - b[3]) / (b[4] * b[4])) +
                  b[5] * exp(-(x - b[6]) * (x - b[6]) / (b[7] * b[7]));)
NIST_MODEL(DanWood, 2, "y = b1*x**b2", return b[0] * pow(x, b[1]);)
NIST_MODEL(Kirby2, 5, "y = (b1 + b2*x + b3*x**2) / (1 + b4*x + b5*x**2)",
           return (b[0] + b[1] * x + b[2] * x * x) / (1.0 + b[3] * x + b[4] * x * x);)
NIST_MODEL(Rational33, 7, "y = (b1 + b2*x + b3*x**2 + b4*x**3) / (1 + b5*x + b6*x**2 + b7*x**3)",
           return (b[0] + x * (b[1] + x * (b[2] + x * b[3]))) /
                  (1.0 + x * (b[4] + x * (b[5] + x * b[6])));)
NIST_MODEL(MGH17, 5, "y = b1 + b2*exp[-x*b4] + b3*exp[-x*b5]",
           return b[0] + b[1] * exp(-x * b[3]) + b[2] * exp(-x * b[4]);)
NIST_MODEL(MGH09, 4, "y = b1*(x**2+x*b2) / (x**2+x*b3+b4)",
           return b[0] * (x * x + x * b[1]) / (x * x + x * b[2] + b[3]);)
NIST_MODEL(MGH10, 3, "y = b1 * exp[b2/(x+b3)]", return b[0] * exp(b[1] / (x + b[2]));)
NIST_MODEL(BoxBOD, 2, "y = b1*(1-exp[-b2*x])", return b[0] * (1.0 - exp(-b[1] * x));)
NIST_MODEL(Rat42, 3, "y = b1 / (1+exp[b2-b3*x])", return b[0] / (1.0 + exp(b[1] - b[2] * x));)
NIST_MODEL(Rat43, 4, "y = b1 / ((1+exp[b2-b3*x])**(1/b4))",
           return b[0] / pow(1.0 + exp(b[1] - b[2] * x), 1.0 / b[3]);)
NIST_MODEL(Eckerle4, 3, "y = (b1/b2) * exp[-0.5*((x-b3)/b2)**2]",
           return (b[0] / b[1]) * exp(-0.5 * ((x - b[2]) / b[1]) * ((x - b[2]) / b[1]));)
NIST_MODEL(Bennett5, 3, "y = b1 * (b2+x)**(-1/b3)", return b[0] * pow(b[1] + x, -1.0 / b[2]);)
// Principal branch of arctan (see tests/data/nist/README.md).
NIST_MODEL(Roszman1, 4, "y = b1 - b2*x - arctan[b3/(x-b4)]/pi",
           return b[0] - b[1] * x - atan(b[2] / (x - b[3])) / std::numbers::pi;)
NIST_MODEL(ENSO, 9,
           "y = b1 + b2*cos(2*pi*x/12) + b3*sin(2*pi*x/12) + b5*cos(2*pi*x/b4) + "
           "b6*sin(2*pi*x/b4) + b8*cos(2*pi*x/b7) + b9*sin(2*pi*x/b7)",
           const double w = 2.0 * std::numbers::pi;
           return b[0] + b[1] * cos(w * x / 12.0) + b[2] * sin(w * x / 12.0) +
                  b[4] * cos(w * x / b[3]) + b[5] * sin(w * x / b[3]) + b[7] * cos(w * x / b[6]) +
                  b[8] * sin(w * x / b[6]);)
#undef NIST_MODEL

// Nelson: two inputs, response log(y) (the file gives y).
struct Nelson : NistEquation<3, 2> {
  static ModelInfo Info() { return NistInfo("Nelson", 3, "log[y] = b1 - b2*x1 * exp[-b3*x2]"); }
  template <typename T>
  static T Evaluate(const T* b, const T* x, const ModelContext&) {
    using std::exp;
    return b[0] - b[1] * x[0] * exp(-b[2] * x[1]);
  }
};

template <typename E>
Problem Make(const std::string& name) {
  return Problem{name, [] { return MakeAutoDiffModel<E>(); }};
}

std::string StripCarriageReturn(std::string line) {
  while (!line.empty() && (line.back() == '\r' || line.back() == '\n')) line.pop_back();
  return line;
}

double ValueAfterColon(const std::string& line) {
  const std::size_t colon = line.find(':');
  if (colon == std::string::npos) throw std::runtime_error("no ':' in line: " + line);
  return std::stod(line.substr(colon + 1));
}

}  // namespace

Dataset ReadDataset(const std::string& path, const std::string& name) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error("cannot open " + path);
  std::vector<std::string> lines;
  for (std::string line; std::getline(in, line);) lines.push_back(StripCarriageReturn(line));
  if (lines.size() < 61) throw std::runtime_error(path + ": shorter than 61 lines");
  Dataset d;
  d.name = name;
  // Lines 41.. : "bK = start1 start2 certified certified_sd" (1-based line 41 = index 40).
  std::size_t i = 40;
  for (; i < lines.size(); ++i) {
    std::istringstream row(lines[i]);
    std::string label, equals;
    double s1, s2, value, sd;
    if (!(row >> label >> equals >> s1 >> s2 >> value >> sd) || label[0] != 'b' || equals != "=") {
      break;
    }
    d.start1.push_back(s1);
    d.start2.push_back(s2);
    d.certified_values.push_back(value);
    d.certified_std_devs.push_back(sd);
  }
  d.num_parameters = static_cast<int>(d.start1.size());
  if (d.num_parameters == 0) throw std::runtime_error(path + ": no parameter lines at line 41");
  for (; i < 60; ++i) {
    if (lines[i].find("Residual Sum of Squares") != std::string::npos) {
      d.certified_rss = ValueAfterColon(lines[i]);
    } else if (lines[i].find("Residual Standard Deviation") != std::string::npos) {
      d.certified_residual_sd = ValueAfterColon(lines[i]);
    }
  }
  const bool nelson = name == "Nelson";
  for (i = 60; i < lines.size(); ++i) {  // data from line 61
    std::istringstream row(lines[i]);
    Observation o;
    if (!(row >> o.y)) continue;  // blank line
    if (!(row >> o.x[0]))
      throw std::runtime_error(path + ": bad data line " + std::to_string(i + 1));
    if (nelson) {
      if (!(row >> o.x[1])) throw std::runtime_error(path + ": Nelson needs x1 x2");
      o.y = std::log(o.y);
    }
    d.observations.push_back(o);
  }
  return d;
}

const std::vector<Problem>& AllProblems() {
  static const std::vector<Problem> problems = {
      Make<Misra1a>("Misra1a"),   Make<Chwirut>("Chwirut2"), Make<Chwirut>("Chwirut1"),
      Make<Lanczos>("Lanczos3"),  Make<Gauss>("Gauss1"),     Make<Gauss>("Gauss2"),
      Make<DanWood>("DanWood"),   Make<Misra1b>("Misra1b"),  Make<Kirby2>("Kirby2"),
      Make<Rational33>("Hahn1"),  Make<Nelson>("Nelson"),    Make<MGH17>("MGH17"),
      Make<Lanczos>("Lanczos1"),  Make<Lanczos>("Lanczos2"), Make<Gauss>("Gauss3"),
      Make<Misra1c>("Misra1c"),   Make<Misra1d>("Misra1d"),  Make<Roszman1>("Roszman1"),
      Make<ENSO>("ENSO"),         Make<MGH09>("MGH09"),      Make<Rational33>("Thurber"),
      Make<BoxBOD>("BoxBOD"),     Make<Rat42>("Rat42"),      Make<MGH10>("MGH10"),
      Make<Eckerle4>("Eckerle4"), Make<Rat43>("Rat43"),      Make<Bennett5>("Bennett5"),
  };
  return problems;
}

double LogRelativeError(double estimate, double certified, double cap) {
  const double error = certified != 0.0 ? std::abs(estimate - certified) / std::abs(certified)
                                        : std::abs(estimate - certified);
  if (error == 0.0) return cap;
  if (!std::isfinite(error)) return 0.0;
  return std::clamp(-std::log10(error), 0.0, cap);
}

}  // namespace sorbtrace::fitters::nist
