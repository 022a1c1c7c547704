// Archival parts of the PDF datasheet (internal to the report stage): a valid ToUnicode CMap
// for libharu's UTF-8 TrueType fonts, the document information dictionary with matching XMP
// metadata, a deterministic file identifier and an sRGB output intent.
//
// Why the ToUnicode CMap is repaired inside libharu and not by a post-processing pass:
// libharu 2.3.0 (Debian libhpdf-dev) writes, for a TrueType font used through its UTF-8
// encoder, a ToUnicode stream holding a *CID* CMap ("1 begincidrange <0000> <FFFF> 0
// endcidrange"). A ToUnicode CMap must map codes to Unicode with bfchar/bfrange (ISO
// 32000-1:2008 §9.10.3); a cidrange there is invalid, and poppler says so once per font and
// page ("Invalid 'begincidrange' operator in ToUnicode CMap"). The codes that libharu's UTF-8
// encoder writes into content streams are the UTF-16 code units of the text's BMP code points
// (Encoding /Identity-H, CIDToGIDMap from the font's cmap table), so the correct ToUnicode
// is the identity on the BMP. libharu exposes its object model in its installed headers
// (hpdf_objects.h, hpdf_font.h, hpdf_doc.h): the font's ToUnicode stream object is kept and
// its content replaced before the document is written. This needs no second PDF library, no
// second parse of the bytes and keeps the output a pure function of the inputs; a libqpdf
// pass would have added a dependency, a parse and a rewrite (object renumbering, a second
// compression) for the same four kilobytes. The same object API writes the XMP packet, the
// trailer /ID and the output intent, which libharu's own PDF/A helper does with a wall-clock
// file identifier (time()), unescaped XML and a misspelt "/DestOutputProfile " key.
//
// PDF/A-1b (ISO 19005-1:2005) status, as far as libharu allows; see README "PDF conformance":
// met: fonts embedded; document information and XMP agree (§6.7.3); /ID in the trailer
// (§6.1.3); no transparency, no encryption, no external content; an output intent with an
// embedded ICC v2 sRGB profile (§6.2.2); header version 1.4; XMP stream not filtered (§6.7.2).
// Not met: libharu's font subsets carry no CIDSet stream (§6.3.5), so the file does not
// claim PDF/A conformance (no pdfaid entry in the XMP packet). No PDF/A validator (veraPDF)
// is available offline; the checks that are run are poppler's and qpdf's.
#pragma once

#include <hpdf.h>

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>

namespace sorbtrace::report::internal {

// What the document information and the XMP packet say. Strings are UTF-8.
struct DocumentIdentity {
  std::string title;     // the sheet title
  std::string author;    // the lab (else "sorbtrace")
  std::string subject;   // the job id
  std::string creator;   // "sorbtrace 0.1.0"
  std::string producer;  // "sorbtrace 0.1.0 (libharu 2.3.0)"
  // The document date (the job's issue date): creation and modification date alike. Without
  // one, no date is written (never the wall clock: outputs are byte-identical per input).
  std::optional<HPDF_Date> date;
};

// The ToUnicode CMap for codes that are UTF-16 code units of BMP code points: identity
// bfranges of 256 codes each (ISO 32000-1 §9.10.3: a bfrange's codes differ in the last byte
// only; at most 100 entries per block), leaving out the surrogate block D800-DFFF (no code
// point of its own) and the non-characters FFFE, FFFF.
std::string IdentityToUnicodeCMap();

// Replaces the content of `font`'s ToUnicode stream with IdentityToUnicodeCMap() and drops
// the CID-CMap dictionary keys libharu put on it; sets the descendant CIDFont's
// CIDSystemInfo /Ordering to "Identity". `font` must be a libharu Type0 TrueType font from
// the UTF-8 encoder. Throws ComputationError if it is not.
void RepairToUnicode(HPDF_Font font);

// "2026-06-02T00:00:00Z" (XMP date, ISO 8601) for a libharu date in UTC.
std::string XmpDate(const HPDF_Date& date);

// The XMP packet (ISO 16684-1; the PDF/A-1 property mapping of ISO 19005-1 §6.7.3): dc:title,
// dc:creator, dc:description, xmp:CreatorTool, xmp:CreateDate/ModifyDate (if dated),
// pdf:Producer.
std::string XmpPacket(const DocumentIdentity& identity);

// Writes the information dictionary (Title, Author, Subject, Creator, Producer and, if
// dated, CreationDate/ModDate), the same as an uncompressed XMP metadata stream in the
// catalog, a trailer /ID of two equal 16-byte strings (the first half of the SHA-256 of the
// identity fields: a function of the inputs, ISO 32000-1 §14.4) and sets the header version
// to 1.4. Throws ComputationError if libharu fails.
void WriteDocumentIdentity(HPDF_Doc pdf, const DocumentIdentity& identity);

// Adds a /GTS_PDFA1 output intent whose DestOutputProfile embeds the RGB ICC profile file
// (sRGB from Debian's icc-profiles-free). Throws InputError naming the file if it is missing
// or is not an RGB display-class ICC profile of version 2 (PDF 1.4 takes ICC.1:1998-09).
void AddOutputIntent(HPDF_Doc pdf, const std::filesystem::path& icc_profile);

}  // namespace sorbtrace::report::internal
