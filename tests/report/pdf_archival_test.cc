// The archival parts of the PDF (pipeline/report/internal/pdf_archival.h): the ToUnicode
// CMap follows ISO 32000-1:2008 §9.10.3 (bfrange codes differ in the last byte only, at most
// 100 entries per block, no cidrange), the XMP packet is well-formed XML with the document's
// fields, and a document written through Document reads back through poppler with every
// special character of the sheet (°, ±, ³, ², ×, µ, subscripts, Greek) and no warning.
#include "pipeline/report/internal/pdf_archival.h"

#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/report/document.h"
#include "pipeline/report/plot/svg_canvas.h"
#include "tests/common/e2e_support.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report::internal {
namespace {

namespace fs = std::filesystem;

// stdout of `command`; its stderr into *err.
std::string RunTool(const std::string& command, std::string* err, int* exit_code) {
  e2e::Outcome run = e2e::ShellApart(command, testing::WriteTempFile("stderr.txt", ""));
  *exit_code = run.exit_code;
  *err = std::move(run.error_output);
  return std::move(run.output);
}

TEST(ToUnicodeCMap, IdentityBfrangesOverTheBmpWithoutSurrogates) {
  const std::string cmap = internal::IdentityToUnicodeCMap();
  EXPECT_EQ(cmap.find("cidrange"), std::string::npos);
  EXPECT_NE(cmap.find("1 begincodespacerange\n<0000> <FFFF>\nendcodespacerange"),
            std::string::npos);
  // Every range: <hh00> <hhFF> <hh00> (last byte only varies, ISO 32000-1 §9.10.3).
  static const std::regex range(
      R"(<([0-9A-F]{2})([0-9A-F]{2})> <([0-9A-F]{2})([0-9A-F]{2})> <([0-9A-F]{4})>)");
  int ranges = 0;
  for (auto it = std::sregex_iterator(cmap.begin(), cmap.end(), range);
       it != std::sregex_iterator(); ++it, ++ranges) {
    const auto& m = *it;
    EXPECT_EQ(m[1], m[3]) << m.str();
    EXPECT_EQ(m[2], "00") << m.str();
    EXPECT_EQ(m[5], m[1].str() + m[2].str()) << "identity: " << m.str();
    const int high = std::stoi(m[1], nullptr, 16);
    EXPECT_TRUE(high < 0xD8 || high > 0xDF) << "UTF-16 surrogates are not characters";
    EXPECT_EQ(m[4], high == 0xFF ? "FD" : "FF") << "U+FFFE, U+FFFF are non-characters";
  }
  EXPECT_EQ(ranges, 256 - 8);  // 256 high bytes less the 8 surrogate ones
  // Block sizes: at most 100 (Adobe TN #5014), and they add up to the ranges.
  static const std::regex block(R"((\d+) beginbfrange)");
  int total = 0;
  for (auto it = std::sregex_iterator(cmap.begin(), cmap.end(), block);
       it != std::sregex_iterator(); ++it) {
    const int n = std::stoi((*it)[1]);
    EXPECT_LE(n, 100);
    total += n;
  }
  EXPECT_EQ(total, ranges);
}

TEST(XmpPacket, EscapesTextAndCarriesEveryField) {
  EXPECT_EQ(plot::XmlEscape("a<b>&'\"\x01z"), "a&lt;b&gt;&amp;&apos;&quot;z");
  internal::DocumentIdentity id;
  id.title = "Sheet <A&B>";
  id.author = "Müller & Söhne";
  id.subject = "JOB-1";
  id.creator = "sorbtrace 9.9";
  id.producer = "sorbtrace 9.9 (libharu x)";
  HPDF_Date date{};
  date.year = 2026;
  date.month = 6;
  date.day = 2;
  date.ind = 'Z';
  id.date = date;
  const std::string xmp = internal::XmpPacket(id);
  EXPECT_NE(xmp.find("<rdf:li xml:lang=\"x-default\">Sheet &lt;A&amp;B&gt;</rdf:li>"),
            std::string::npos);
  EXPECT_NE(xmp.find("<rdf:li>Müller &amp; Söhne</rdf:li>"), std::string::npos);
  EXPECT_NE(xmp.find(">JOB-1<"), std::string::npos);
  EXPECT_NE(xmp.find("<xmp:CreateDate>2026-06-02T00:00:00Z</xmp:CreateDate>"), std::string::npos);
  EXPECT_NE(xmp.find("<pdf:Producer>sorbtrace 9.9 (libharu x)</pdf:Producer>"), std::string::npos);
  id.date.reset();
  EXPECT_EQ(internal::XmpPacket(id).find("Date"), std::string::npos) << "undated: no date";
}

TEST(OutputIntent, RefusesAMissingOrUnsuitableProfile) {
  HPDF_Doc pdf = HPDF_New(nullptr, nullptr);
  ASSERT_NE(pdf, nullptr);
  EXPECT_THROW(internal::AddOutputIntent(pdf, "/nonexistent/sRGB.icc"), InputError);
  // A 128-byte ICC header (ICC.1:2001-04 §6.1) of version 4: PDF 1.4 takes version 2 only.
  std::string header(128, '\0');
  header.replace(12, 4, "mntr");
  header.replace(16, 4, "RGB ");
  header.replace(36, 4, "acsp");
  header[8] = 4;
  EXPECT_THROW(internal::AddOutputIntent(pdf, testing::WriteTempFile("v4.icc", header)),
               InputError);
  header[8] = 2;
  header.replace(16, 4, "CMYK");
  EXPECT_THROW(internal::AddOutputIntent(pdf, testing::WriteTempFile("cmyk.icc", header)),
               InputError);
  header.replace(16, 4, "RGB ");
  EXPECT_NO_THROW(internal::AddOutputIntent(pdf, testing::WriteTempFile("v2.icc", header)));
  HPDF_Free(pdf);
}

// A page with every special character the sheets use (and some they may): written with the
// embedded DejaVu font through libharu's UTF-8 encoder, it must read back unchanged.
TEST(PdfDocument, SpecialCharactersReadBackAndPopplerIsSilent) {
  Template layout;
  layout.title = "Sorption sheet";
  ReportOptions options;
  options.font_directory = SORBTRACE_DEFAULT_FONT_DIR;
  options.document_date = "2026-06-02";
  const std::string sample =
      "23 °C ± 0.2 K; 12 m³ 4 m² 3 × 10⁻⁶; 5 µm; H₂O p₀ w₁; α β θ λ μ σ Δ Ω; –";
  Letterhead letterhead;
  letterhead.draft = false;
  letterhead.lab_name = "Prüflabor Ærø & Co";
  Document doc(layout, options, "REP-7", "1.2.3", letterhead);
  doc.NewPage();
  doc.Paragraph(sample);
  doc.Paragraph("Bold: α ± ³", 8.5, 0.0, plot::palette::kInk, true);
  const fs::path pdf = testing::WriteTempFile("special.pdf", doc.Finish());

  std::string err;
  int code = -1;
  const std::string text = RunTool("pdftotext -enc UTF-8 '" + pdf.string() + "' -", &err, &code);
  EXPECT_EQ(code, 0);
  EXPECT_EQ(err, "");
  EXPECT_NE(text.find(sample), std::string::npos) << text;
  EXPECT_NE(text.find("Bold: α ± ³"), std::string::npos) << text;

  const std::string info = RunTool("pdfinfo '" + pdf.string() + "'", &err, &code);
  EXPECT_EQ(err, "");
  EXPECT_NE(info.find("Title:           Sorption sheet\n"), std::string::npos) << info;
  EXPECT_NE(info.find("Author:          Prüflabor Ærø & Co\n"), std::string::npos) << info;
  EXPECT_NE(info.find("Subject:         REP-7\n"), std::string::npos) << info;
  EXPECT_NE(info.find("Creator:         sorbtrace 1.2.3\n"), std::string::npos) << info;
  EXPECT_NE(info.find("PDF version:     1.4\n"), std::string::npos) << info;
  const std::string meta = RunTool("pdfinfo -meta '" + pdf.string() + "'", &err, &code);
  EXPECT_NE(meta.find("<rdf:li>Prüflabor Ærø &amp; Co</rdf:li>"), std::string::npos) << meta;
  EXPECT_NE(meta.find("<xmp:CreateDate>2026-06-02T00:00:00Z</xmp:CreateDate>"), std::string::npos)
      << meta;

  const std::string check = RunTool("qpdf --check '" + pdf.string() + "'", &err, &code);
  EXPECT_EQ(code, 0) << check << err;
  EXPECT_EQ(check.find("WARNING"), std::string::npos) << check;
}

TEST(PdfDocument, WithoutALabTheAuthorIsSorbtrace) {
  Template layout;
  ReportOptions options;
  options.font_directory = SORBTRACE_DEFAULT_FONT_DIR;
  Document doc(layout, options, "REP-8", "1.2.3", Letterhead{});  // a draft: no laboratory
  doc.NewPage();
  const fs::path pdf = testing::WriteTempFile("nolab.pdf", doc.Finish());
  std::string err;
  int code = -1;
  const std::string info = RunTool("pdfinfo '" + pdf.string() + "'", &err, &code);
  EXPECT_NE(info.find("Author:          sorbtrace\n"), std::string::npos) << info;
  EXPECT_EQ(info.find("CreationDate"), std::string::npos) << "undated: no date" << info;
}

}  // namespace
}  // namespace sorbtrace::report::internal
