// LoadLabProfile: the laboratory profile named by [job] lab_profile (docs/input-formats.md,
// "Laboratory profile"). A small TOML file of strings:
//
//   [laboratory]      name, address (required), contact, logo (optional; a PNG or JPEG file
//                     relative to the profile, LoadLabLogo)
//   [accreditation]   number, body (both, or no table: a laboratory without accreditation)
//   [[signatory]]     name, role (at least one: ISO/IEC 17025:2017, 7.8.2.1 o)
//   [[location]]      id, address (optional; none: the work is done at the lab's address)
//
// Every key is known or refused at its line and column; nothing is guessed.
#include <toml++/toml.h>

#include <algorithm>
#include <cstdint>
#include <initializer_list>
#include <string>
#include <string_view>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

class ProfileReader {
 public:
  explicit ProfileReader(std::string display) : display_(std::move(display)) {}

  SourceLocation At(const toml::source_region& region) const {
    return SourceLocation{display_, static_cast<int>(region.begin.line),
                          static_cast<int>(region.begin.column)};
  }

  [[noreturn]] void Fail(const toml::source_region& region, std::string message,
                         std::string expected) const {
    throw InputError(At(region), std::move(message), std::move(expected));
  }

  void CheckKeys(const toml::table& table, std::string_view section,
                 std::initializer_list<std::string_view> allowed) const {
    for (auto&& [key, value] : table) {
      if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
      std::string list;
      for (std::string_view name : allowed) list += (list.empty() ? "" : ", ") + std::string(name);
      Fail(key.source(), "unknown key '" + Excerpt(key.str()) + "' in " + std::string(section),
           "one of: " + list);
    }
  }

  // A non-empty string; "" when absent and not required.
  std::string Text(const toml::table& table, std::string_view section, std::string_view key,
                   bool required) const {
    const toml::node* node = table.get(key);
    if (node == nullptr) {
      if (required) {
        Fail(table.source(), "missing key '" + std::string(key) + "' in " + std::string(section),
             std::string(key) + " (a non-empty string)");
      }
      return "";
    }
    if (!node->is_string()) {
      Fail(node->source(),
           "key '" + std::string(key) + "' in " + std::string(section) + " is not a string",
           "a quoted string");
    }
    std::string value = node->as_string()->get();
    if (value.find_first_not_of(" \t") == std::string::npos) {
      Fail(node->source(),
           "key '" + std::string(key) + "' in " + std::string(section) + " is empty",
           "a non-empty string");
    }
    return value;
  }

  const toml::table* OptionalTable(const toml::table& root, std::string_view name) const {
    const toml::node* node = root.get(name);
    if (node == nullptr) return nullptr;
    if (!node->is_table()) {
      Fail(node->source(), "'" + std::string(name) + "' is not a table",
           "a [" + std::string(name) + "] table");
    }
    return node->as_table();
  }

  // The tables of [[name]]; empty when absent.
  std::vector<const toml::table*> Entries(const toml::table& root, std::string_view name) const {
    std::vector<const toml::table*> out;
    const toml::node* node = root.get(name);
    if (node == nullptr) return out;
    if (!node->is_array_of_tables()) {
      Fail(node->source(), "'" + std::string(name) + "' is not an array of tables",
           "[[" + std::string(name) + "]] entries");
    }
    for (const toml::node& item : *node->as_array()) out.push_back(item.as_table());
    return out;
  }

  const std::string& display() const { return display_; }

 private:
  std::string display_;
};

void ReadLaboratory(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  const toml::table* lab = in.OptionalTable(root, "laboratory");
  if (lab == nullptr) {
    throw InputError(SourceLocation{in.display(), 1, 1}, "missing table [laboratory]",
                     "a [laboratory] table with name and address");
  }
  in.CheckKeys(*lab, "[laboratory]", {"name", "address", "contact", "logo"});
  profile.name = in.Text(*lab, "[laboratory]", "name", true);
  profile.address = in.Text(*lab, "[laboratory]", "address", true);
  profile.contact = in.Text(*lab, "[laboratory]", "contact", false);
  profile.logo_as_written = in.Text(*lab, "[laboratory]", "logo", false);
  if (!profile.logo_as_written.empty()) {
    profile.logo_where = in.At(lab->get("logo")->source());
  }
}

void ReadAccreditation(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  const toml::table* table = in.OptionalTable(root, "accreditation");
  if (table == nullptr) return;
  in.CheckKeys(*table, "[accreditation]", {"number", "body"});
  profile.accreditation_number = in.Text(*table, "[accreditation]", "number", true);
  profile.accreditation_body = in.Text(*table, "[accreditation]", "body", true);
}

void ReadSignatories(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  for (const toml::table* table : in.Entries(root, "signatory")) {
    in.CheckKeys(*table, "[[signatory]]", {"name", "role"});
    profile.signatories.push_back({in.Text(*table, "[[signatory]]", "name", true),
                                   in.Text(*table, "[[signatory]]", "role", true)});
  }
  if (profile.signatories.empty()) {
    throw InputError(SourceLocation{in.display(), 1, 1}, "no [[signatory]] entries",
                     "at least one [[signatory]] with name and role (the person authorizing "
                     "the report, ISO/IEC 17025:2017, 7.8.2.1 o)");
  }
}

void ReadLocations(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  for (const toml::table* table : in.Entries(root, "location")) {
    in.CheckKeys(*table, "[[location]]", {"id", "address"});
    LabLocation location{in.Text(*table, "[[location]]", "id", true),
                         in.Text(*table, "[[location]]", "address", true)};
    for (const LabLocation& other : profile.locations) {
      if (other.id == location.id) {
        in.Fail(table->get("id")->source(),
                "location id '" + Excerpt(location.id) + "' is used twice", "a unique id");
      }
    }
    profile.locations.push_back(std::move(location));
  }
}

[[noreturn]] void RefuseLogo(const LabProfile& profile, const std::string& problem) {
  throw InputError(profile.logo_where, "logo '" + Excerpt(profile.logo_as_written) + "' " + problem,
                   "a PNG (8-bit grey or RGB, no transparency) or JPEG (grey or RGB) file of at "
                   "most 1 MiB and 4096 pixels a side, relative to the laboratory profile");
}

std::uint32_t BigEndian32(const std::string& bytes, size_t at) {
  std::uint32_t value = 0;
  for (size_t i = 0; i < 4; ++i) {
    value = (value << 8) | static_cast<unsigned char>(bytes[at + i]);
  }
  return value;
}

// PNG (ISO/IEC 15948:2004 / W3C PNG 2nd ed.): the 8-byte signature, IHDR first (width, height,
// bit depth, colour type 0 grey or 2 RGB, interlace 0), no tRNS chunk before IDAT.
void CheckPng(LabProfile& profile) {
  const std::string& b = profile.logo_bytes;
  static const std::string kSignature("\x89PNG\r\n\x1a\n", 8);
  constexpr size_t kIhdrEnd = 8 + 8 + 13;  // signature, length + type, IHDR data
  if (b.size() < kIhdrEnd + 4 || b.compare(12, 4, "IHDR") != 0) {
    RefuseLogo(profile, "is not a complete PNG file (no IHDR chunk)");
  }
  profile.logo_width_px = static_cast<int>(std::min<std::uint32_t>(BigEndian32(b, 16), 1u << 30));
  profile.logo_height_px = static_cast<int>(std::min<std::uint32_t>(BigEndian32(b, 20), 1u << 30));
  const int bit_depth = static_cast<unsigned char>(b[24]);
  const int colour_type = static_cast<unsigned char>(b[25]);
  const int interlace = static_cast<unsigned char>(b[28]);
  if (bit_depth != 8 || (colour_type != 0 && colour_type != 2) || interlace != 0) {
    RefuseLogo(profile, "is a PNG of bit depth " + std::to_string(bit_depth) + ", colour type " +
                            std::to_string(colour_type) + ", interlace " +
                            std::to_string(interlace) +
                            " (8-bit grey or RGB, not interlaced, is embedded as it is)");
  }
  // Chunks up to IDAT: a tRNS chunk would make libharu write a soft mask.
  for (size_t at = 8; at + 8 <= b.size();) {
    const std::uint32_t length = BigEndian32(b, at);
    const std::string type = b.substr(at + 4, 4);
    if (type == "tRNS") RefuseLogo(profile, "has transparency (tRNS chunk)");
    if (type == "IDAT") return;
    if (length > b.size() - at - 12) break;
    at += 12 + length;
  }
  RefuseLogo(profile, "is not a complete PNG file (no image data)");
}

// JPEG (ITU-T T.81): SOI, then markers up to the first frame header SOF0..SOF2 (baseline,
// extended, progressive) giving height, width and 1 (grey) or 3 (colour) components.
void CheckJpeg(LabProfile& profile) {
  const std::string& b = profile.logo_bytes;
  const auto byte = [&b](size_t i) { return static_cast<unsigned char>(b[i]); };
  for (size_t at = 2; at + 4 <= b.size();) {
    if (byte(at) != 0xFF) break;
    const int marker = byte(at + 1);
    const size_t length = (static_cast<size_t>(byte(at + 2)) << 8) | byte(at + 3);
    if (marker >= 0xC0 && marker <= 0xC2) {
      if (at + 10 > b.size()) break;
      profile.logo_height_px = (byte(at + 5) << 8) | byte(at + 6);
      profile.logo_width_px = (byte(at + 7) << 8) | byte(at + 8);
      const int components = byte(at + 9);
      if (components != 1 && components != 3) {
        RefuseLogo(profile, "is a JPEG with " + std::to_string(components) +
                                " colour components (1 grey or 3 colour)");
      }
      return;
    }
    if (marker == 0xDA || length < 2) break;  // image data before any frame header
    at += 2 + length;
  }
  RefuseLogo(profile, "is not a JPEG file with a baseline or progressive frame header");
}

}  // namespace

void LoadLabLogo(const std::filesystem::path& job_dir, const std::string& profile_as_written,
                 bool allow_outside, LabProfile& profile) {
  namespace fs = std::filesystem;
  if (profile.logo_as_written.empty()) return;
  const fs::path written(profile.logo_as_written);
  // The data-path policy, with the logo's path as seen from the job file's folder.
  const fs::path from_job = fs::path(profile_as_written).parent_path() / written;
  if (!allow_outside &&
      (written.is_absolute() || written.has_root_name() || !LiesInsideFolder(from_job, job_dir))) {
    throw InputError(
        profile.logo_where,
        "logo '" + Excerpt(profile.logo_as_written) + "' lies outside the job file's folder",
        "a logo file inside the job file's folder tree (or "
        "allow_data_outside_job_folder = true in [job] for one kept elsewhere)");
  }
  profile.logo_file = (profile.file.parent_path() / written).lexically_normal();
  const std::string problem = RegularFileProblem(profile.logo_file);
  if (!problem.empty()) {
    RefuseLogo(profile, problem + " (looked for " + Excerpt(profile.logo_file.string(), 200) + ")");
  }
  profile.logo_bytes = ReadBoundedFile(profile.logo_file, profile.logo_file.string(),
                                       kMaxLabLogoBytes, "a logo image (PNG or JPEG)");
  const std::string& b = profile.logo_bytes;
  if (b.size() >= 8 && b.compare(0, 8, std::string("\x89PNG\r\n\x1a\n", 8)) == 0) {
    profile.logo_format = LabLogoFormat::kPng;
    CheckPng(profile);
  } else if (b.size() >= 3 && static_cast<unsigned char>(b[0]) == 0xFF &&
             static_cast<unsigned char>(b[1]) == 0xD8 && static_cast<unsigned char>(b[2]) == 0xFF) {
    profile.logo_format = LabLogoFormat::kJpeg;
    CheckJpeg(profile);
  } else {
    RefuseLogo(profile, "is neither a PNG nor a JPEG file");
  }
  if (profile.logo_width_px < 1 || profile.logo_height_px < 1 ||
      profile.logo_width_px > kMaxLabLogoPixels || profile.logo_height_px > kMaxLabLogoPixels) {
    RefuseLogo(profile, "is " + std::to_string(profile.logo_width_px) + " x " +
                            std::to_string(profile.logo_height_px) + " pixels");
  }
}

LabProfile LoadLabProfile(const std::filesystem::path& file, const std::string& display) {
  RequireRegularFile(file, display, "a laboratory profile in TOML");
  const toml::table root = ParseTomlFile(file, "a laboratory profile in TOML");
  const ProfileReader in(display);
  in.CheckKeys(root, "the laboratory profile",
               {"laboratory", "accreditation", "signatory", "location"});
  LabProfile profile;
  profile.file = file;
  ReadLaboratory(in, root, profile);
  ReadAccreditation(in, root, profile);
  ReadSignatories(in, root, profile);
  ReadLocations(in, root, profile);
  return profile;
}

std::string_view SamplingByName(SamplingBy by) {
  switch (by) {
    case SamplingBy::kUnstated:
      return "";
    case SamplingBy::kLaboratory:
      return "laboratory";
    case SamplingBy::kCustomer:
      return "customer";
  }
  return "";
}

}  // namespace sorbtrace::ingest
