// The front matter of the sheet (ISO/IEC 17025:2017, 7.8.2.1 a-p): who issues it (the
// laboratory profile), where the work was done, for whom, on which item and sample, by which
// method, and which report it is (revision, report it supersedes). The same facts are printed
// on the sheet and recorded in results.json "issue".
#include <fmt/format.h>

#include <set>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/physics/physics.h"
#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {
namespace {

using Json = nlohmann::ordered_json;

std::string Accreditation(const ingest::LabProfile& lab) {
  if (lab.accreditation_number.empty()) return "";
  return fmt::format("Accredited by {}, No. {}", lab.accreditation_body, lab.accreditation_number);
}

// The procedure in words, one phrase per kind of data set.
std::string ProcedureText(const ingest::JobSpec& job) {
  std::set<std::string> methods;
  for (const ingest::DataSetSpec& d : job.datasets) {
    methods.insert(d.method == ingest::Method::kDesiccator
                       ? "desiccator series over saturated salt solutions"
                       : "dynamic vapour sorption (continuous mass log)");
  }
  std::string out;
  for (const std::string& m : methods) out += (out.empty() ? "" : "; ") + m;
  return out;
}

// ISO 12570:2000 "Hygrothermal performance of building materials and products - Determination
// of moisture content by drying at elevated temperature", first edition 2000-03-15, confirmed
// in the ISO catalogue entry (iTeh standards catalogue, iso-12570-2000: published 2000-03,
// stage 90.93 confirmed): the oven dry mass. (An amendment of 2013 is from memory.)
std::string DryingCitation(const ingest::JobSpec& job) {
  switch (job.dry_mass_method) {
    case ingest::DryMassMethod::kOvenDrying:
      return "dry mass by oven drying at " + TemperatureLabel(job.drying_temperature_K) +
             " (ISO 12570:2000)";
    case ingest::DryMassMethod::kDesiccantStep:
      return "dry mass at equilibrium over a desiccant (0 % RH)";
    case ingest::DryMassMethod::kFinalDryingStep:
      return "dry mass from the final 0 % RH step";
  }
  return "";
}

std::string SamplingStatement(const ingest::JobSpec& job) {
  const ingest::SamplingSpec& s = job.sampling;
  // ISO/IEC 17025:2017, 7.8.2.2: results apply to the item as received when the customer
  // supplied it.
  switch (s.by) {
    case ingest::SamplingBy::kUnstated:
      return "not stated; the results apply to the item as received";
    case ingest::SamplingBy::kCustomer:
      return "by the customer" + (s.date.empty() ? std::string() : " on " + s.date) +
             (s.plan.empty() ? std::string() : ", plan " + s.plan) +
             "; the results apply to the item as received";
    case ingest::SamplingBy::kLaboratory:
      return "by the laboratory" + (s.date.empty() ? std::string() : " on " + s.date) +
             " to sampling plan " + s.plan;
  }
  return "";
}

std::string ReportIdentity(const ingest::JobSpec& job, const std::string& report_number) {
  if (job.revision == 0) return report_number + ", original issue";
  std::string text = fmt::format("{}, revision {}; supersedes report {}", report_number,
                                 job.revision, PrintedField(job.supersedes));
  if (!job.revision_reason.empty()) text += " (" + PrintedField(job.revision_reason) + ")";
  return text;
}

Json OrNull(const std::string& text) { return text.empty() ? Json(nullptr) : Json(text); }

}  // namespace

Letterhead MakeLetterhead(const ingest::JobSpec* job) {
  Letterhead letterhead;
  if (job == nullptr || !job->lab_profile) return letterhead;
  const ingest::LabProfile& lab = *job->lab_profile;
  letterhead.draft = false;
  letterhead.lab_name = lab.name;
  letterhead.lab_address = lab.address;
  letterhead.accreditation = Accreditation(lab);
  for (const ingest::Signatory& s : lab.signatories) {
    letterhead.signatories.push_back(s.name + ", " + s.role);
  }
  if (!lab.logo_bytes.empty() && lab.logo_height_px > 0) {
    letterhead.logo_bytes = lab.logo_bytes;
    letterhead.logo_format = lab.logo_format;
    letterhead.logo_aspect = static_cast<double>(lab.logo_width_px) / lab.logo_height_px;
    letterhead.logo_where = lab.logo_where;
  }
  return letterhead;
}

std::string MethodCitation(const ingest::IngestResult& ingested) {
  const ingest::JobSpec& job = ingested.job;
  const std::string cited(ingest::TestMethodCitation(job.test_method));
  const std::string procedure = ProcedureText(job);
  std::string text = cited.empty() ? procedure + " (no standard method named by the job)"
                                   : cited + " (" + procedure + ")";
  const std::string drying = DryingCitation(job);
  if (!drying.empty()) text += "; " + drying;
  return text;
}

std::vector<std::pair<std::string, std::string>> FrontMatter(const ReportInputs& inputs,
                                                             const ReportOptions& options) {
  std::vector<std::pair<std::string, std::string>> rows;
  if (inputs.ingested == nullptr) return rows;
  const ingest::JobSpec& job = inputs.ingested->job;
  const auto add_if = [&rows](const char* label, const std::string& text) {
    if (!text.empty()) rows.emplace_back(label, PrintedField(text));
  };
  rows.emplace_back("Report", ReportIdentity(job, PrintedField(job.job_id, kMaxReportNumberChars)));
  if (!job.lab_profile) {
    rows.emplace_back("Laboratory", "none named: DRAFT, not for issue");
  } else {
    add_if("Laboratory", job.lab_profile->name + ", " + job.lab_profile->address);
    add_if("Laboratory contact", job.lab_profile->contact);
    add_if("Location of testing", job.work_location);
  }
  add_if("Client", job.client);
  add_if("Client address", job.client_address);
  add_if("Client contact", job.client_contact);
  add_if("Material", job.material_name);
  add_if("Description", job.material_description);
  rows.emplace_back("Item received",
                    job.received_date.empty() ? "date not stated" : job.received_date);
  add_if("Condition on receipt", job.item_condition);
  rows.emplace_back("Sampling", SamplingStatement(job));
  std::string specimens;
  for (const ingest::SpecimenSpec& s : job.specimens) {
    specimens += (specimens.empty() ? "" : ", ") + s.id;
  }
  rows.emplace_back("Specimens",
                    fmt::format("{} ({})", job.specimens.size(), PrintedField(specimens)));
  rows.emplace_back("Method", MethodCitation(*inputs.ingested));
  std::string temperatures;
  for (double t : internal::DistinctTemperatures(inputs)) {
    temperatures += (temperatures.empty() ? "" : ", ") + TemperatureLabel(t);
  }
  add_if("Temperature", temperatures);
  add_if("Test dates", job.test_dates);
  rows.emplace_back("Issued", job.issue_date.empty() ? options.document_date : job.issue_date);
  return rows;
}

Json IssueJson(const ReportInputs& inputs, const Sheet& sheet) {
  Json issue;
  issue["draft"] = sheet.letterhead.draft;
  if (inputs.ingested == nullptr) return issue;
  const ingest::JobSpec& job = inputs.ingested->job;
  Json lab = nullptr;
  if (job.lab_profile) {
    const ingest::LabProfile& p = *job.lab_profile;
    lab = Json::object();
    lab["name"] = p.name;
    lab["address"] = p.address;
    lab["contact"] = OrNull(p.contact);
    lab["accreditation"] = p.accreditation_number.empty() ? Json(nullptr)
                                                          : Json{{"number", p.accreditation_number},
                                                                 {"body", p.accreditation_body}};
    Json signatories = Json::array();
    for (const ingest::Signatory& s : p.signatories) {
      signatories.push_back({{"name", s.name}, {"role", s.role}});
    }
    lab["signatories"] = signatories;
    lab["profile"] = p.file_as_written;
  }
  issue["laboratory"] = lab;
  issue["location"] = OrNull(job.work_location);
  issue["revision"] = job.revision;
  issue["supersedes"] = OrNull(job.supersedes);
  issue["revision_reason"] = OrNull(job.revision_reason);
  issue["client"] = {{"name", OrNull(job.client)},
                     {"address", OrNull(job.client_address)},
                     {"contact", OrNull(job.client_contact)}};
  issue["item"] = {{"received_date", OrNull(job.received_date)},
                   {"condition", OrNull(job.item_condition)}};
  issue["sampling"] = {{"by", OrNull(std::string(ingest::SamplingByName(job.sampling.by)))},
                       {"plan", OrNull(job.sampling.plan)},
                       {"date", OrNull(job.sampling.date)},
                       {"statement", SamplingStatement(job)}};
  issue["method"] = {{"key", OrNull(std::string(ingest::TestMethodName(job.test_method)))},
                     {"citation", MethodCitation(*inputs.ingested)}};
  Json deviations = Json::array();
  for (const std::string& d : sheet.deviations) deviations.push_back(d);
  issue["deviations"] = deviations;
  issue["end_marker"] = sheet.end_marker;
  return issue;
}

}  // namespace sorbtrace::report::internal
