// Generates the invented demonstration data under example_inputs/: four test scenarios of the
// fictional Hollowmere Building Physics Laboratory, with known true isotherms (truth.json), so
// that end-to-end tests can check that the pipeline recovers them.
//
//   generate_examples [OUTPUT_DIR]     (default: <source dir>/example_inputs)
//
// Deterministic: one std::mt19937_64 per scenario with a fixed initial state, normal deviates by
// the Box-Muller transform written here (not std::normal_distribution), numbers formatted by fmt
// with fixed decimals. Running it twice gives byte-identical files.
//
// Truth model: GAB, X(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)) [kg/kg], one parameter set
// per material and branch (desorption above adsorption: hysteresis); temperature dependence
// C = C0 exp(dH_C / (R T)), K = K0 exp(dH_K / (R T)) with X_m constant. Kinetics: first order,
// X(t) = X_eq + (X_start - X_eq) exp(-t / tau) within each humidity step.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "pipeline/common/files.h"
#include "pipeline/physics/physics.h"

namespace {

namespace fs = std::filesystem;
using sorbtrace::physics::CelsiusToKelvin;

constexpr double kR_J_per_mol_K = sorbtrace::physics::kMolarGasConstant_J_per_mol_K;
constexpr double kHour_s = 3600.0;
constexpr double kMinute_s = 60.0;
constexpr double kDay_s = 86400.0;

// ---- Random numbers ---------------------------------------------------------------------
class Random {
 public:
  explicit Random(std::uint64_t initial_state) : engine_(initial_state) {}
  // Uniform on (0, 1): 53 random bits.
  double Uniform() {
    constexpr double kTwoPow53 = 9007199254740992.0;
    return (static_cast<double>(engine_() >> 11) + 0.5) / kTwoPow53;
  }
  // Standard normal by Box-Muller (one of the pair used, so the stream is simple to follow).
  double Normal() {
    const double u1 = Uniform();
    const double u2 = Uniform();
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// ---- GAB --------------------------------------------------------------------------------
struct Gab {
  double xm_kg_per_kg;
  double c;
  double k;
  double X(double a) const {
    const double ka = k * a;
    return xm_kg_per_kg * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
  }
  // Water activity at moisture content x (inverse of X for 0 < a < 1/K): the positive root of
  // (1 - K a)(1 - K a + C K a) x = X_m C K a, a quadratic in y = K a.
  double ActivityAt(double x) const {
    // x (1 - y)(1 + (C - 1) y) = X_m C y  ->  -x(C-1) y^2 + (x(C-2) - X_m C) y + x = 0
    const double qa = -x * (c - 1.0);
    const double qb = x * (c - 2.0) - xm_kg_per_kg * c;
    const double qc = x;
    const double y = (-qb - std::sqrt(qb * qb - 4.0 * qa * qc)) / (2.0 * qa);
    return y / k;
  }
  nlohmann::ordered_json Json() const {
    return {{"xm_kg_per_kg", xm_kg_per_kg}, {"c", c}, {"k", k}};
  }
};

// GAB with Arrhenius C(T), K(T), fixed at a reference temperature.
struct GabOfTemperature {
  Gab at_reference;
  double reference_K;
  double dH_C_J_per_mol;
  double dH_K_J_per_mol;
  Gab At(double temperature_K) const {
    const double f = 1.0 / (kR_J_per_mol_K * temperature_K) - 1.0 / (kR_J_per_mol_K * reference_K);
    return Gab{at_reference.xm_kg_per_kg, at_reference.c * std::exp(dH_C_J_per_mol * f),
               at_reference.k * std::exp(dH_K_J_per_mol * f)};
  }
  nlohmann::ordered_json Json() const {
    const double inv = 1.0 / (kR_J_per_mol_K * reference_K);
    return {{"form", "C = C0 exp(dH_C/(R T)), K = K0 exp(dH_K/(R T)), X_m constant"},
            {"xm_kg_per_kg", at_reference.xm_kg_per_kg},
            {"c0", at_reference.c * std::exp(-dH_C_J_per_mol * inv)},
            {"dH_C_J_per_mol", dH_C_J_per_mol},
            {"k0", at_reference.k * std::exp(-dH_K_J_per_mol * inv)},
            {"dH_K_J_per_mol", dH_K_J_per_mol}};
  }
};

// ---- Dates ------------------------------------------------------------------------------
// Days since 1970-01-01 of a civil date and back (proleptic Gregorian; H. Hinnant's
// algorithms, public domain description "chrono-compatible low-level date algorithms").
std::int64_t DaysFromCivil(int y, int m, int d) {
  y -= m <= 2 ? 1 : 0;
  const std::int64_t era = (y >= 0 ? y : y - 399) / 400;
  const int yoe = static_cast<int>(y - era * 400);
  const int doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const int doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

std::string IsoDateTime(double seconds_since_epoch) {
  const auto total = static_cast<std::int64_t>(std::llround(seconds_since_epoch));
  std::int64_t z = total / 86400;
  const int secs = static_cast<int>(total % 86400);
  z += 719468;
  const std::int64_t era = (z >= 0 ? z : z - 146096) / 146097;
  const int doe = static_cast<int>(z - era * 146097);
  const int yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const int doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const int mp = (5 * doy + 2) / 153;
  const int d = doy - (153 * mp + 2) / 5 + 1;
  const int m = mp + (mp < 10 ? 3 : -9);
  const int y = static_cast<int>(yoe + era * 400 + (m <= 2 ? 1 : 0));
  return fmt::format("{:04d}-{:02d}-{:02d}T{:02d}:{:02d}", y, m, d, secs / 3600, (secs / 60) % 60);
}

// 0 = Monday ... 6 = Sunday.
int Weekday(double seconds_since_epoch) {
  const auto days = static_cast<std::int64_t>(std::floor(seconds_since_epoch / kDay_s));
  return static_cast<int>(((days + 3) % 7 + 7) % 7);  // 1970-01-01 was a Thursday
}

// ---- Output -----------------------------------------------------------------------------
void Write(const fs::path& path, const std::string& text) {
  fs::create_directories(path.parent_path());
  sorbtrace::WriteFileAtomically(path, text);
  fmt::print("wrote {} ({} bytes)\n", path.string(), text.size());
}

// The laboratory profile of the demonstration jobs: one invented laboratory (each scenario
// folder holds a copy, so a job and its profile move together and the profile lies inside
// the job's folder tree as the data-path policy asks).
constexpr const char* kLabProfile =
    "# Invented laboratory profile of the demonstration jobs (scripts/generate_examples.cc).\n"
    "# Laboratory, accreditation, people and addresses are fictional.\n"
    "[laboratory]\n"
    "name = \"Hollowmere Building Physics Laboratory (fictional)\"\n"
    "address = \"12 Quarry Lane, Hollowmere HM4 7QX, Fictland\"\n"
    "contact = \"+00 1234 567890, sorption@hollowmere.example\"\n\n"
    "[accreditation]\n"
    "number = \"FT-0000 (fictional)\"\n"
    "body = \"Fictland Accreditation Service (fictional)\"\n\n"
    "[[signatory]]\n"
    "name = \"R. Aldous-Penhale\"\n"
    "role = \"technical manager\"\n\n"
    "[[signatory]]\n"
    "name = \"M. Ketteridge\"\n"
    "role = \"quality manager\"\n\n"
    "[[location]]\n"
    "id = \"main\"\n"
    "address = \"Hygrothermal laboratory, 12 Quarry Lane, Hollowmere\"\n\n"
    "[[location]]\n"
    "id = \"sorption-annex\"\n"
    "address = \"Sorption annex, Unit 3, Mill Yard, Hollowmere\"\n";

// What a job adds for its issue: laboratory, material class and method ([job]), customer and
// item ([material]), sampling ([sampling]).
struct IssueFacts {
  std::string job_keys;       // after `template = ...` in [job]
  std::string material_keys;  // replace the demo client line of [material]
  std::string sampling;       // the [sampling] table
};

// Inserts the issue facts into a job text written by the scenario code and writes the job
// and its laboratory profile into `dir`.
void WriteJob(const fs::path& dir, std::string job, const IssueFacts& facts) {
  const std::string template_line = "template = \"full\"\n";
  job.insert(job.find(template_line) + template_line.size(), facts.job_keys);
  const std::string client_line =
      "client = \"Hollowmere Building Physics Laboratory, internal study\"\n";
  job.replace(job.find(client_line), client_line.size(), facts.material_keys);
  job.insert(job.find("[measurement]"), facts.sampling + "\n");
  Write(dir / "job.toml", job);
  Write(dir / "lab_profile.toml", kLabProfile);
}

// ---- An invented laboratory logo (one demo shows it): a small PNG written here ----
// PNG (W3C PNG 2nd ed. / ISO/IEC 15948:2004): signature, IHDR (8-bit RGB), one IDAT holding a
// zlib stream (RFC 1950) of stored deflate blocks (RFC 1951 §3.2.4), IEND; chunk CRC-32 of
// ISO 3309 (polynomial 0xEDB88320, reflected), zlib Adler-32 (RFC 1950 §8.2).
std::uint32_t Crc32(const std::string& bytes) {
  std::uint32_t crc = 0xFFFFFFFFu;
  for (const char ch : bytes) {
    crc ^= static_cast<unsigned char>(ch);
    for (int bit = 0; bit < 8; ++bit) crc = (crc >> 1) ^ (0xEDB88320u & (0u - (crc & 1u)));
  }
  return crc ^ 0xFFFFFFFFu;
}

void PutBigEndian32(std::string& out, std::uint32_t value) {
  for (int shift = 24; shift >= 0; shift -= 8) out += static_cast<char>((value >> shift) & 0xFF);
}

void PngChunk(std::string& png, const std::string& type, const std::string& data) {
  PutBigEndian32(png, static_cast<std::uint32_t>(data.size()));
  png += type + data;
  PutBigEndian32(png, Crc32(type + data));
}

std::string StoredZlib(const std::string& raw) {
  std::string z = {'\x78', '\x01'};  // deflate, 32 KiB window, no preset dictionary
  constexpr size_t kMaxStored = 65535;
  for (size_t at = 0; at == 0 || at < raw.size(); at += kMaxStored) {
    const size_t n = std::min(kMaxStored, raw.size() - at);
    z += static_cast<char>(at + n >= raw.size() ? 1 : 0);  // BFINAL, BTYPE = 00 (stored)
    z += static_cast<char>(n & 0xFF);
    z += static_cast<char>(n >> 8);
    z += static_cast<char>(~n & 0xFF);
    z += static_cast<char>((~n >> 8) & 0xFF);
    z += raw.substr(at, n);
  }
  std::uint32_t a = 1, b = 0;
  for (const char ch : raw) {
    a = (a + static_cast<unsigned char>(ch)) % 65521u;
    b = (b + a) % 65521u;
  }
  PutBigEndian32(z, (b << 16) | a);
  return z;
}

// 120 x 40 pixels: a teal tile with three white strata (a stylised stack of layers) and a
// slate bar under it; nothing copied from any artwork.
std::string InventedLogoPng() {
  constexpr int kWidth = 120, kHeight = 40;
  std::string raw;
  for (int y = 0; y < kHeight; ++y) {
    raw += '\0';  // filter type 0 (None)
    for (int x = 0; x < kWidth; ++x) {
      unsigned char r = 255, g = 255, bl = 255;  // white
      const bool tile = x < 40;
      const bool stratum = tile && x >= 6 && x < 34 && (y % 10 >= 4 && y % 10 < 7) && y < 36;
      if (tile && !stratum) r = 0x1F, g = 0x6F, bl = 0x78;  // teal
      if (!tile && y >= 26 && y < 31 && x >= 46 && x < 116) r = 0x4A, g = 0x55, bl = 0x68;
      raw += static_cast<char>(r);
      raw += static_cast<char>(g);
      raw += static_cast<char>(bl);
    }
  }
  std::string png("\x89PNG\r\n\x1a\n", 8);
  std::string header;
  PutBigEndian32(header, kWidth);
  PutBigEndian32(header, kHeight);
  header += std::string{'\x08', '\x02', '\0', '\0', '\0'};  // 8-bit RGB, no interlace
  PngChunk(png, "IHDR", header);
  PngChunk(png, "IDAT", StoredZlib(raw));
  PngChunk(png, "IEND", "");
  return png;
}

// The lime demo's profile names the invented logo (the other demos have none).
void WriteProfileWithLogo(const fs::path& dir) {
  std::string profile = kLabProfile;
  const std::string contact_end = "sorption@hollowmere.example\"\n";
  profile.insert(profile.find(contact_end) + contact_end.size(), "logo = \"logo.png\"\n");
  Write(dir / "lab_profile.toml", profile);
  Write(dir / "logo.png", InventedLogoPng());
}

// =========================================================================================
// Scenario 1: lime plaster, desiccator method (ISO 12571), three specimens, 23 degC.
// =========================================================================================
struct DesiccatorTruth {
  Gab adsorption;
  Gab desorption;
  std::vector<std::pair<std::string, double>> specimen_factors;
  std::vector<std::string> notes;
};

DesiccatorTruth LimePlasterDesiccator(const fs::path& dir) {
  Random rng(0x4c494d45504c53ULL);  // fixed initial state
  const Gab adsorption{0.0045, 15.0, 0.92};
  const Gab desorption{0.0052, 18.0, 0.905};
  const double t_nominal_C = 23.0;
  // Specimens: dry masses 40..46 g, scale factors around 1 (mean exactly 1).
  const std::vector<std::string> ids = {"P1", "P2", "P3"};
  std::vector<double> dry(3), factor(3);
  for (int i = 0; i < 3; ++i) {
    dry[static_cast<std::size_t>(i)] = std::round((40.0 + 6.0 * rng.Uniform()) * 1e4) / 1e4;
    factor[static_cast<std::size_t>(i)] = 1.0 + 0.03 * rng.Normal();
  }
  const double mean_factor = (factor[0] + factor[1] + factor[2]) / 3.0;
  for (double& f : factor) f /= mean_factor;

  struct Plan {
    std::string atmosphere;
    std::string branch;
  };
  const std::vector<Plan> plan = {
      {"oven", "drying"},         {"LiCl", "adsorption"},  {"MgCl2", "adsorption"},
      {"Mg(NO3)2", "adsorption"}, {"NaCl", "adsorption"},  {"KCl", "adsorption"},
      {"K2SO4", "adsorption"},    {"KCl", "desorption"},   {"NaCl", "desorption"},
      {"Mg(NO3)2", "desorption"}, {"MgCl2", "desorption"}, {"LiCl", "desorption"}};
  // State per specimen: moisture content, starting from lab air (about 50 % RH).
  std::vector<double> x(3);
  for (int i = 0; i < 3; ++i)
    x[static_cast<std::size_t>(i)] = factor[static_cast<std::size_t>(i)] * adsorption.X(0.5);

  std::string csv =
      "# Hollowmere Building Physics Laboratory - desiccator weighings (invented data)\n";
  csv += "# lime plaster LP-7, discs 100 mm x 20 mm, balance 0.1 mg\n";
  csv += "specimen,step,atmosphere,branch,temperature_C,weighed_at,mass_g,note\n";
  struct Row {
    double time;
    int specimen;
    std::string line;
  };
  std::vector<Row> rows;
  // Start Monday 2026-03-02 09:00.
  double day = static_cast<double>(DaysFromCivil(2026, 3, 2)) * kDay_s + 9.0 * kHour_s;
  DesiccatorTruth truth{adsorption, desorption, {}, {}};
  for (int i = 0; i < 3; ++i)
    truth.specimen_factors.emplace_back(ids[static_cast<std::size_t>(i)],
                                        factor[static_cast<std::size_t>(i)]);

  for (std::size_t s = 0; s < plan.size(); ++s) {
    const Plan& step = plan[s];
    const bool oven = step.atmosphere == "oven";
    const double step_T_C = oven ? 105.0 : t_nominal_C;
    double rh = 0.0;
    if (!oven) {
      rh = sorbtrace::physics::SaltSolutionHumidity(step.atmosphere, CelsiusToKelvin(t_nominal_C))
               .rh_fraction;
    }
    const Gab& gab = step.branch == "desorption" ? desorption : adsorption;
    // Time constant of the 20 mm discs: 20 h at low RH rising to about 40 h near saturation;
    // the oven dries faster (6 h).
    const double tau_s =
        oven ? 6.0 * kHour_s : (20.0 + 20.0 * rh * rh) * kHour_s * (1.0 + 0.1 * rng.Normal());
    std::vector<double> x_start = x, x_eq(3);
    for (int i = 0; i < 3; ++i)
      x_eq[static_cast<std::size_t>(i)] =
          oven ? 0.0 : factor[static_cast<std::size_t>(i)] * gab.X(rh);
    // At the K2SO4 adsorption step P3 responds four times more slowly (a denser disc); the lab
    // moves on when P1 and P2 are at constant mass, so P3 is not: the pipeline must flag it.
    const bool slow_p3 = step.atmosphere == "K2SO4" && step.branch == "adsorption";
    const double step_start = day;
    std::vector<std::vector<double>> masses(3);
    std::vector<double> times;
    int weighings = 0;
    while (true) {
      // Next weighing day: one day later, skipping Saturday and Sunday.
      day += kDay_s;
      while (Weekday(day) >= 5) day += kDay_s;
      const double t = day - step_start;
      times.push_back(day);
      ++weighings;
      for (int i = 0; i < 3; ++i) {
        const auto si = static_cast<std::size_t>(i);
        const double tau_i = slow_p3 && i == 2 ? 4.0 * tau_s : tau_s;
        x[si] = x_eq[si] + (x_start[si] - x_eq[si]) * std::exp(-t / tau_i);
        // Balance: 0.12 mg standard uncertainty, reading rounded to 0.1 mg.
        const double m = std::round((dry[si] * (1.0 + x[si]) + 0.00012 * rng.Normal()) * 1e4) / 1e4;
        masses[si].push_back(m);
      }
      // The lab's own rule, stricter than ISO 12571 (0.1 %) so that the recorded masses sit
      // close to equilibrium: range of the last three weighings below 0.02 % of the mass, and
      // at least four weighings per step.
      auto constant = [&](std::size_t si) {
        const auto& mm = masses[si];
        if (mm.size() < 3) return false;
        const double hi = std::max({mm[mm.size() - 1], mm[mm.size() - 2], mm[mm.size() - 3]});
        const double lo = std::min({mm[mm.size() - 1], mm[mm.size() - 2], mm[mm.size() - 3]});
        return (hi - lo) / mm.back() < 0.0002;
      };
      bool all = weighings >= 4;
      for (std::size_t si = 0; si < 3; ++si) all = all && (constant(si) || (slow_p3 && si == 2));
      constexpr int kMaxWeighings = 30;
      if (all || weighings >= kMaxWeighings) break;
    }
    for (std::size_t w = 0; w < times.size(); ++w) {
      for (int i = 0; i < 3; ++i) {
        const auto si = static_cast<std::size_t>(i);
        const double minutes = 4.0 * i + std::round(3.0 * rng.Uniform());
        const double temperature =
            oven ? 105.0 + 0.5 * rng.Normal() : step_T_C + 0.15 * rng.Normal();
        std::string note;
        if (w == 0 && !oven) note = fmt::format("into {} desiccator", step.atmosphere);
        if (slow_p3 && i == 2 && w + 1 == times.size())
          note = "not yet at constant mass; moved on with P1 and P2";
        rows.push_back(
            Row{times[w] + minutes * kMinute_s, i,
                fmt::format("{},{},{},{},{:.1f},{},{:.4f},{}\n", ids[si], s + 1, step.atmosphere,
                            step.branch, temperature, IsoDateTime(times[w] + minutes * kMinute_s),
                            masses[si][w], note)});
      }
    }
    if (slow_p3) {
      truth.notes.push_back(fmt::format(
          "P3 was moved on from step {} ({} adsorption) before constant mass: its moisture content "
          "there was {:.5f} kg/kg against {:.5f} at equilibrium; it should be flagged and excluded",
          s + 1, step.atmosphere, x[2], x_eq[2]));
    }
  }
  std::stable_sort(rows.begin(), rows.end(),
                   [](const Row& a, const Row& b) { return a.time < b.time; });
  for (const Row& row : rows) csv += row.line;
  Write(dir / "data" / "desiccator.csv", csv);

  std::string job;
  job +=
      "# Invented demonstration job (scripts/generate_examples.cc). Fictional laboratory and "
      "material.\n";
  job += fmt::format("[job]\nid = \"HBPL-2026-0307\"\nissue_date = \"{}\"\ntemplate = \"full\"\n",
                     IsoDateTime(rows.back().time + 7.0 * kDay_s).substr(0, 10));
  job += fmt::format("test_dates = \"{} to {}\"\n\n", IsoDateTime(rows.front().time).substr(0, 10),
                     IsoDateTime(rows.back().time).substr(0, 10));
  job += "[material]\nname = \"Lime plaster LP-7 (fictional)\"\n";
  job +=
      "description = \"Hydraulic lime plaster, discs 100 mm x 20 mm cut from 28-day cured "
      "panels\"\n";
  job += "client = \"Hollowmere Building Physics Laboratory, internal study\"\n\n";
  job += "[measurement]\ndry_mass_method = \"oven\"\ndrying_temperature_C = 105\n";
  job += "balance_resolution_g = 0.0001\nbalance_standard_uncertainty_g = 0.00012\n";
  job += "temperature_standard_uncertainty_K = 0.2\n\n";
  for (const auto& id : ids) {
    job += fmt::format("[[specimen]]\nid = \"{}\"\nbulk_density_kg_per_m3 = 1450\n\n", id);
  }
  job +=
      "[[dataset]]\nid = \"desiccator-23C\"\nmethod = \"desiccator\"\nfile = "
      "\"data/desiccator.csv\"\n";
  job += "temperature_C = 23.0\n";
  // Specifications: one that passes, one whose result is inconclusive (docs/input-formats.md).
  job +=
      "\n"
      "# Statements of conformity (invented specifications). The decision rules are those agreed "
      "with\n"
      "# the (fictional) client before the test (ISO/IEC 17025:2017, 7.1.3).\n"
      "[[specification]]\n"
      "quantity = \"moisture_23C_80RH_adsorption\"\n"
      "upper_limit = 2.0\n"
      "unit = \"%\"\n"
      "decision_rule = \"guarded_acceptance\"\n"
      "guard_band_fraction_of_U = 1.0\n"
      "document = \"Hollowmere render brief HR-4, clause 3.2 (fictional)\"\n"
      "\n"
      "[[specification]]\n"
      "quantity = \"moisture_23C_50RH_adsorption\"\n"
      "upper_limit = 0.78\n"
      "unit = \"%\"\n"
      "decision_rule = \"conformance_probability\"\n"
      "required_conformance_probability = 0.95\n"
      "document = \"Hollowmere render brief HR-4, clause 3.3 (fictional)\"\n";
  WriteJob(dir, job,
           {"lab_profile = \"lab_profile.toml\"\nlocation = \"main\"\n"
            "material_class = \"porous_mineral\"\nmethod = \"iso_12571_desiccator\"\n",
            "client = \"Cobbleford Lime Works (fictional)\"\n"
            "client_address = \"4 Kiln Road, Cobbleford CB2 9LW, Fictland\"\n"
            "client_contact = \"J. Tarrant, j.tarrant@cobbleford.example\"\n"
            "received_date = \"2026-02-24\"\n"
            "condition = \"three cured panels in sealed bags, intact\"\n",
            "[sampling]\nby = \"laboratory\"\n"
            "plan = \"HBPL-SP-03 (fictional): three discs cut from the centre of each panel\"\n"
            "date = \"2026-02-26\"\n"});
  WriteProfileWithLogo(dir);
  return truth;
}

// =========================================================================================
// Continuous vapour-sorption logs.
// =========================================================================================
struct LogSettings {
  double temperature_C = 23.0;
  double dry_mass_g = 1.0;
  double initial_moisture = 0.05;
  double row_s = 60.0;
  double min_step_s = 60.0 * kMinute_s;
  double max_step_s = 8.0 * kHour_s;
  double min_drying_s = 6.0 * kHour_s;
  double lab_rate_limit_per_min = 3e-6;  // the simulated instrument's stop rule (0.0003 %/min)
  double balance_noise_g = 2e-6;
  double rh_noise_fraction = 0.002;
  double rh_lag_s = 120.0;
  double temperature_noise_K = 0.03;
  // tau(rh) = tau0 + tau1 rh^4 [s]
  double tau0_s = 30.0 * kMinute_s;
  double tau1_s = 330.0 * kMinute_s;
};

struct StepRecord {
  double set_rh;
  std::string branch;
  int cycle;
  double x_eq;
  double x_end;
  double duration_h;
  bool cut;  // ended by the maximum step time
};

struct LogOutput {
  std::string csv;
  std::vector<StepRecord> steps;
};

LogOutput SimulateLog(const std::string& title, const std::vector<double>& set_points,
                      const Gab& adsorption, const Gab& desorption, const LogSettings& s,
                      Random& rng) {
  LogOutput out;
  out.csv =
      "# Hollowmere Building Physics Laboratory - vapour-sorption balance log (invented data)\n";
  out.csv += "# " + title + "\n";
  out.csv += "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_mg\n";
  double t = 0.0;
  double x = s.initial_moisture;
  double rh_air = 0.5;
  double previous_set = -1.0;
  std::string previous_branch;
  int cycle = 0;
  for (double set : set_points) {
    std::string branch =
        set == 0.0 ? "drying"
                   : (previous_set < 0.0 || set > previous_set ? "adsorption" : "desorption");
    if (branch == "adsorption" && previous_branch == "desorption") ++cycle;
    if (branch != "drying") previous_branch = branch;
    previous_set = set;
    const Gab& gab = branch == "desorption" ? desorption : adsorption;
    const double x_eq = set == 0.0 ? 0.0 : gab.X(set);
    const double x_start = x;
    const double tau =
        (s.tau0_s + s.tau1_s * std::pow(std::max(set, 0.0), 4)) * (1.0 + 0.05 * rng.Normal());
    double step_t = 0.0;
    const double rh_start = rh_air;
    bool cut = false;
    while (true) {
      rh_air = set + (rh_start - set) * std::exp(-step_t / s.rh_lag_s);
      x = x_eq + (x_start - x_eq) * std::exp(-step_t / tau);
      const double mass_mg = (s.dry_mass_g * (1.0 + x) + s.balance_noise_g * rng.Normal()) * 1e3;
      const double rh_meas = std::clamp(rh_air + s.rh_noise_fraction * rng.Normal(), 0.0, 1.0);
      const double temperature = s.temperature_C + s.temperature_noise_K * rng.Normal();
      out.csv += fmt::format("{:.0f},{:.1f},{:.2f},{:.2f},{:.4f}\n", t, set * 100.0,
                             rh_meas * 100.0, temperature, mass_mg);
      // Instrument stop rule on the (noise-free) rate of the specimen, relative to dry mass.
      const double rate_per_min =
          std::abs(x_start - x_eq) / tau * std::exp(-step_t / tau) * kMinute_s;
      t += s.row_s;
      step_t += s.row_s;
      // Drying steps are held longer (the dry reference must be dry).
      const double min_step = set == 0.0 ? s.min_drying_s : s.min_step_s;
      const double max_step = set == 0.0 ? std::max(s.max_step_s, s.min_drying_s) : s.max_step_s;
      if (step_t >= min_step && rate_per_min < s.lab_rate_limit_per_min) break;
      if (step_t >= max_step) {
        cut = true;
        break;
      }
    }
    out.steps.push_back(StepRecord{set, branch, cycle, x_eq, x, step_t / kHour_s, cut});
  }
  return out;
}

nlohmann::ordered_json StepsJson(const std::vector<StepRecord>& steps) {
  nlohmann::ordered_json j = nlohmann::ordered_json::array();
  for (const auto& s : steps) {
    j.push_back({{"set_rh_percent", s.set_rh * 100.0},
                 {"branch", s.branch},
                 {"cycle", s.cycle},
                 {"true_equilibrium_moisture_kg_per_kg", s.x_eq},
                 {"moisture_at_step_end_kg_per_kg", s.x_end},
                 {"duration_h", s.duration_h},
                 {"ended_by_maximum_step_time", s.cut}});
  }
  return j;
}

std::string LogJob(
    const std::string& id, const std::string& issue, const std::string& dates,
    const std::string& name, const std::string& description, const std::string& dry_method,
    const std::vector<std::tuple<std::string, std::string, double, std::string>>& datasets,
    const std::vector<std::pair<std::string, double>>& specimens) {
  std::string job;
  job +=
      "# Invented demonstration job (scripts/generate_examples.cc). Fictional laboratory and "
      "material.\n";
  job += fmt::format(
      "[job]\nid = \"{}\"\nissue_date = \"{}\"\ntemplate = \"full\"\ntest_dates = \"{}\"\n\n", id,
      issue, dates);
  job += fmt::format("[material]\nname = \"{}\"\ndescription = \"{}\"\n", name, description);
  job += "client = \"Hollowmere Building Physics Laboratory, internal study\"\n\n";
  job += fmt::format("[measurement]\ndry_mass_method = \"{}\"\n", dry_method);
  job += "balance_resolution_g = 0.0000001\nbalance_standard_uncertainty_g = 0.000002\n";
  job +=
      "rh_sensor_standard_uncertainty_percent = 0.8\ntemperature_standard_uncertainty_K = 0.1\n\n";
  for (const auto& [sid, density] : specimens) {
    job += fmt::format("[[specimen]]\nid = \"{}\"\n", sid);
    if (density > 0.0) job += fmt::format("bulk_density_kg_per_m3 = {:.0f}\n", density);
    job += "\n";
  }
  for (const auto& [did, file, temperature, specimen] : datasets) {
    job += fmt::format(
        "[[dataset]]\nid = \"{}\"\nmethod = \"vapor_log\"\nfile = \"{}\"\ntemperature_C = {:.1f}\n"
        "specimen = \"{}\"\n\n",
        did, file, temperature, specimen);
  }
  return job;
}

}  // namespace

int main(int argc, char** argv) {
  const fs::path out =
      argc > 1 ? fs::path(argv[1]) : fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs";
  nlohmann::ordered_json truth;
  truth["about"] =
      "True isotherms behind the invented example data (scripts/generate_examples.cc). GAB: "
      "X = xm c k a / ((1 - k a)(1 - k a + c k a)), X in kg/kg, a = RH as a fraction.";
  truth["scenarios"] = nlohmann::ordered_json::array();

  // ---- 1. Lime plaster, desiccator ----
  {
    const DesiccatorTruth t = LimePlasterDesiccator(out / "lime_plaster_desiccator");
    nlohmann::ordered_json factors;
    for (const auto& [id, f] : t.specimen_factors) factors[id] = f;
    truth["scenarios"].push_back(
        {{"scenario", "lime_plaster_desiccator"},
         {"material", "Lime plaster LP-7 (fictional)"},
         {"method", "desiccator"},
         {"isotherms",
          {{{"temperature_C", 23.0}, {"branch", "adsorption"}, {"gab", t.adsorption.Json()}},
           {{"temperature_C", 23.0}, {"branch", "desorption"}, {"gab", t.desorption.Json()}}}},
         {"specimen_factors", factors},
         {"specimen_factors_note",
          "each specimen's moisture content is the GAB value times its factor; the "
          "factors average to 1, so the specimen mean follows the GAB truth"},
         {"notes", t.notes}});
  }

  // ---- 2. Wood-fibre board, 23 degC, two adsorption/desorption cycles ----
  const GabOfTemperature wood_ads{{0.058, 7.5, 0.78}, CelsiusToKelvin(23.0), 12000.0, 2500.0};
  const GabOfTemperature wood_des{{0.066, 9.0, 0.755}, CelsiusToKelvin(23.0), 12000.0, 2500.0};
  {
    Random rng(0x574f4f4446494252ULL);
    LogSettings s;
    s.dry_mass_g = 1.2483;
    s.initial_moisture = 0.085;
    const std::vector<double> cycle = {0.1, 0.2, 0.4, 0.6, 0.8, 0.9, 0.8, 0.6, 0.4, 0.2, 0.1};
    std::vector<double> sequence = {0.0};
    for (int c = 0; c < 2; ++c) {
      sequence.insert(sequence.end(), cycle.begin(), cycle.end());
      sequence.push_back(0.0);
    }
    const LogOutput log =
        SimulateLog("wood-fibre board WF-160, specimen W1, 23 degC, one reading per 60 s", sequence,
                    wood_ads.at_reference, wood_des.at_reference, s, rng);
    const fs::path dir = out / "wood_fibre_board_vapour";
    Write(dir / "data" / "vapour_log_W1.csv", log.csv);
    WriteJob(
        dir,
        LogJob("HBPL-2026-0311", "2026-05-20", "2026-04-06 to 2026-04-16",
               "Wood-fibre board WF-160 (fictional)",
               "Wet-process wood-fibre insulation board, 160 kg/m3, specimen cut 15 x 15 x "
               "10 mm",
               "desiccant_step", {{"dvs-23C", "data/vapour_log_W1.csv", 23.0, "W1"}},
               {{"W1", 160.0}}),
        {"lab_profile = \"lab_profile.toml\"\nlocation = \"sorption-annex\"\n"
         "material_class = \"wood_or_fibre\"\nmethod = \"iso_12571_climatic_chamber\"\n",
         "client = \"Fernvale Fibreboards (fictional)\"\n"
         "client_address = \"Unit 9, Fernvale Industrial Estate, Fernvale FV1 2AB, Fictland\"\n"
         "client_contact = \"P. Okafor-Lind, quality@fernvale.example\"\n"
         "received_date = \"2026-03-30\"\n"
         "condition = \"one board offcut 300 x 300 mm, dry, undamaged\"\n",
         "[sampling]\nby = \"customer\"\n"});
    truth["scenarios"].push_back({{"scenario", "wood_fibre_board_vapour"},
                                  {"material", "Wood-fibre board WF-160 (fictional)"},
                                  {"method", "vapor_log"},
                                  {"dry_mass_g", s.dry_mass_g},
                                  {"isotherms",
                                   {{{"temperature_C", 23.0},
                                     {"branch", "adsorption"},
                                     {"gab", wood_ads.at_reference.Json()}},
                                    {{"temperature_C", 23.0},
                                     {"branch", "desorption"},
                                     {"gab", wood_des.at_reference.Json()}}}},
                                  {"steps", StepsJson(log.steps)}});
  }

  // ---- 3. Powdered excipient, 25 degC, adsorption ending at 80 % RH ----
  {
    Random rng(0x4558434950494e54ULL);
    const Gab excipient{0.030, 5.0, 0.82};
    LogSettings s;
    s.temperature_C = 25.0;
    s.dry_mass_g = 0.025317;
    s.initial_moisture = 0.03;
    s.balance_noise_g = 2e-7;
    s.tau0_s = 12.0 * kMinute_s;
    s.tau1_s = 40.0 * kMinute_s;
    s.min_step_s = 30.0 * kMinute_s;
    const std::vector<double> sequence = {0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8};
    const LogOutput log =
        SimulateLog("powdered excipient EX-12, 25 mg, 25 degC, one reading per 60 s", sequence,
                    excipient, excipient, s, rng);
    const fs::path dir = out / "excipient_powder_25C";
    Write(dir / "data" / "vapour_log_E1.csv", log.csv);
    std::string job =
        LogJob("HBPL-2026-0318", "2026-05-22", "2026-04-20 to 2026-04-21",
               "Powdered excipient EX-12 (fictional)",
               "Spray-dried binder powder for tableting, 25 mg in a quartz pan", "desiccant_step",
               {{"dvs-25C", "data/vapour_log_E1.csv", 25.0, "E1"}}, {{"E1", 0.0}});
    // Specifications: one on the Ph. Eur. 5.11 mass increase, one on a 23 °C reference that
    // this 25 °C test cannot give ("no statement").
    job +=
        "# Statements of conformity (invented specifications, agreed with the fictional client).\n"
        "[[specification]]\n"
        "quantity = \"hygroscopicity_mass_increase\"\n"
        "upper_limit = 15.0\n"
        "unit = \"%\"\n"
        "decision_rule = \"guarded_acceptance\"\n"
        "guard_band_fraction_of_U = 1.0\n"
        "inconclusive_zone = true\n"
        "document = \"Hollowmere excipient sheet EX-12, item 7 (fictional)\"\n"
        "\n"
        "[[specification]]\n"
        "quantity = \"moisture_23C_80RH_adsorption\"\n"
        "upper_limit = 9.0\n"
        "unit = \"%\"\n"
        "decision_rule = \"simple_acceptance\"\n"
        "document = \"Hollowmere excipient sheet EX-12, item 8 (fictional)\"\n";
    WriteJob(dir, job,
             {"lab_profile = \"lab_profile.toml\"\nlocation = \"sorption-annex\"\n"
              "material_class = \"pharmaceutical_powder\"\nmethod = \"ph_eur_2_9_39\"\n",
              "client = \"Pellwick Excipients (fictional)\"\n"
              "client_address = \"2 Tablet Row, Pellwick PW3 5EX, Fictland\"\n"
              "client_contact = \"Dr A. Vasquez-Hale, a.vasquez-hale@pellwick.example\"\n"
              "received_date = \"2026-04-14\"\n"
              "condition = \"sealed amber glass vial, powder free-flowing\"\n",
              "[sampling]\nby = \"customer\"\nplan = \"batch EX-12-0426, retained sample "
              "(fictional)\"\n"});
    const double x80 = excipient.X(0.8);
    // Ph. Eur. 5.11 classes (thresholds: conform::HygroscopicityClasses, sourced there): slightly 0.2-2 %, hygroscopic 2-15 %,
    // very hygroscopic >= 15 % mass increase at 25 degC / 80 % RH.
    const std::string cls = x80 >= 0.15    ? "very hygroscopic"
                            : x80 >= 0.02  ? "hygroscopic"
                            : x80 >= 0.002 ? "slightly hygroscopic"
                                           : "not hygroscopic";
    truth["scenarios"].push_back(
        {{"scenario", "excipient_powder_25C"},
         {"material", "Powdered excipient EX-12 (fictional)"},
         {"method", "vapor_log"},
         {"dry_mass_g", s.dry_mass_g},
         {"isotherms",
          {{{"temperature_C", 25.0}, {"branch", "adsorption"}, {"gab", excipient.Json()}}}},
         {"moisture_at_80_percent_rh_kg_per_kg", x80},
         {"hygroscopicity_class_from_dry_mass", cls},
         {"steps", StepsJson(log.steps)}});
  }

  // ---- 4. Wood-fibre board at 23 and 40 degC (isosteric heat) ----
  {
    Random rng(0x49534f5354455249ULL);
    const std::vector<double> sequence = {0.0, 0.1, 0.2, 0.4, 0.6, 0.8,
                                          0.9, 0.8, 0.6, 0.4, 0.2, 0.1};
    const fs::path dir = out / "wood_fibre_board_23C_40C";
    nlohmann::ordered_json isotherms = nlohmann::ordered_json::array();
    nlohmann::ordered_json steps;
    std::vector<std::tuple<std::string, std::string, double, std::string>> datasets;
    struct Run {
      double temperature_C;
      std::string specimen;
      double dry_mass_g;
    };
    for (const Run& run : {Run{23.0, "W2", 1.1906}, Run{40.0, "W3", 1.2217}}) {
      LogSettings s;
      s.temperature_C = run.temperature_C;
      s.dry_mass_g = run.dry_mass_g;
      s.initial_moisture = 0.08;
      // Faster diffusion at 40 degC.
      const double speed = run.temperature_C > 30.0 ? 0.6 : 1.0;
      s.tau0_s *= speed;
      s.tau1_s *= speed;
      const double T = CelsiusToKelvin(run.temperature_C);
      const Gab ads = wood_ads.At(T), des = wood_des.At(T);
      const std::string file =
          fmt::format("data/vapour_log_{}_{:.0f}C.csv", run.specimen, run.temperature_C);
      const LogOutput log =
          SimulateLog(fmt::format("wood-fibre board WF-160, specimen {}, {:.0f} degC", run.specimen,
                                  run.temperature_C),
                      sequence, ads, des, s, rng);
      Write(dir / file, log.csv);
      const std::string did = fmt::format("dvs-{:.0f}C", run.temperature_C);
      datasets.emplace_back(did, file, run.temperature_C, run.specimen);
      isotherms.push_back(
          {{"temperature_C", run.temperature_C}, {"branch", "adsorption"}, {"gab", ads.Json()}});
      isotherms.push_back(
          {{"temperature_C", run.temperature_C}, {"branch", "desorption"}, {"gab", des.Json()}});
      steps[did] = StepsJson(log.steps);
    }
    WriteJob(
        dir,
        LogJob("HBPL-2026-0322", "2026-05-29", "2026-04-22 to 2026-05-02",
               "Wood-fibre board WF-160 (fictional)",
               "Wet-process wood-fibre insulation board, 160 kg/m3; adsorption "
               "and desorption at 23 and 40 degC",
               "desiccant_step", datasets, {{"W2", 160.0}, {"W3", 160.0}}),
        {"lab_profile = \"lab_profile.toml\"\nlocation = \"sorption-annex\"\n"
         "material_class = \"wood_or_fibre\"\nmethod = \"iso_12571_climatic_chamber\"\n"
         "revision = 1\nsupersedes = \"HBPL-2026-0322 issued 2026-05-12\"\n"
         "revision_reason = \"client address corrected\"\n",
         "client = \"Fernvale Fibreboards (fictional)\"\n"
         "client_address = \"Unit 9, Fernvale Industrial Estate, Fernvale FV1 2AB, Fictland\"\n"
         "client_contact = \"P. Okafor-Lind, quality@fernvale.example\"\n"
         "received_date = \"2026-04-15\"\n"
         "condition = \"two board offcuts 300 x 300 mm, dry, undamaged\"\n",
         "[sampling]\nby = \"laboratory\"\n"
         "plan = \"HBPL-SP-07 (fictional): specimens cut from the board centre\"\n"});
    // Net isosteric heat from the truth at fixed moisture contents (Clausius-Clapeyron between
    // the two temperatures): q = R ln(a2/a1) / (1/T1 - 1/T2).
    const double T1 = CelsiusToKelvin(23.0), T2 = CelsiusToKelvin(40.0);
    nlohmann::ordered_json heat = nlohmann::ordered_json::array();
    for (double xq : {0.03, 0.05, 0.07, 0.09, 0.11, 0.13}) {
      const double a1 = wood_ads.At(T1).ActivityAt(xq), a2 = wood_ads.At(T2).ActivityAt(xq);
      heat.push_back({{"moisture_kg_per_kg", xq},
                      {"rh_23C", a1},
                      {"rh_40C", a2},
                      {"net_isosteric_heat_kJ_per_mol",
                       kR_J_per_mol_K * std::log(a2 / a1) / (1.0 / T1 - 1.0 / T2) / 1e3}});
    }
    truth["scenarios"].push_back({{"scenario", "wood_fibre_board_23C_40C"},
                                  {"material", "Wood-fibre board WF-160 (fictional)"},
                                  {"method", "vapor_log"},
                                  {"isotherms", isotherms},
                                  {"temperature_dependence_adsorption", wood_ads.Json()},
                                  {"temperature_dependence_desorption", wood_des.Json()},
                                  {"adsorption_net_isosteric_heat", heat},
                                  {"steps", steps}});
  }
  Write(out / "truth.json", truth.dump(2) + "\n");
  return 0;
}
