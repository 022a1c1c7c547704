#include "pipeline/report/internal/pdf_archival.h"

#include <fmt/format.h>
#include <hpdf_doc.h>
#include <hpdf_font.h>
#include <hpdf_objects.h>
#include <hpdf_streams.h>

#include <array>
#include <string>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/report/plot/svg_canvas.h"

namespace sorbtrace::report::internal {

using plot::XmlEscape;

namespace {

// ISO 32000-1:2008 §9.10.3 / Adobe Technical Note #5014: at most 100 entries per
// begin...end block.
constexpr int kMaxCMapBlockEntries = 100;
// UTF-16 surrogate code units (Unicode 15.0 §3.8): high bytes D8-DF are not characters.
constexpr unsigned kFirstSurrogateHighByte = 0xD8, kLastSurrogateHighByte = 0xDF;
// U+FFFE and U+FFFF are non-characters (Unicode 15.0 §23.7): the last range ends at FFFD.
constexpr unsigned kLastCharacterInLastBlock = 0xFD;
// ICC.1:2001-04 §6.1 profile header: size 0-3, version 8, class 12-15, colour space 16-19,
// signature "acsp" 36-39.
constexpr size_t kIccHeaderBytes = 128;
constexpr size_t kIccVersionByte = 8, kIccClassOffset = 12, kIccSpaceOffset = 16;
constexpr size_t kIccSignatureOffset = 36;
constexpr int kIccMajorVersionForPdf14 = 2;  // PDF 1.4 (ISO 19005-1 base): ICC.1:1998-09, v2
constexpr size_t kIccMaxBytes = 4u << 20;    // an sRGB profile is a few kilobytes
constexpr size_t kFileIdBytes = 16;          // ISO 32000-1 §14.4: MD5-sized, 16 bytes common

void Check(bool ok, const char* doing) {
  if (!ok) throw ComputationError(fmt::format("PDF writer failed while {}", doing));
}

std::string Hex4(unsigned code) { return fmt::format("<{:04X}>", code); }

std::string PdfDate(const HPDF_Date& d) {
  return fmt::format("{:04d}-{:02d}-{:02d}T{:02d}:{:02d}:{:02d}", d.year, d.month, d.day, d.hour,
                     d.minutes, d.seconds);
}

}  // namespace

std::string IdentityToUnicodeCMap() {
  std::vector<std::string> ranges;
  for (unsigned high = 0; high <= 0xFF; ++high) {
    if (high >= kFirstSurrogateHighByte && high <= kLastSurrogateHighByte) continue;
    const unsigned first = high << 8;
    const unsigned last = high == 0xFF ? (first | kLastCharacterInLastBlock) : (first | 0xFF);
    ranges.push_back(Hex4(first) + " " + Hex4(last) + " " + Hex4(first));
  }
  std::string cmap =
      "/CIDInit /ProcSet findresource begin\n"
      "12 dict begin\n"
      "begincmap\n"
      "/CIDSystemInfo << /Registry (Adobe) /Ordering (UCS) /Supplement 0 >> def\n"
      "/CMapName /Adobe-Identity-UCS def\n"
      "/CMapType 2 def\n"
      "1 begincodespacerange\n<0000> <FFFF>\nendcodespacerange\n";
  for (size_t start = 0; start < ranges.size(); start += kMaxCMapBlockEntries) {
    const size_t end = std::min(ranges.size(), start + kMaxCMapBlockEntries);
    cmap += fmt::format("{} beginbfrange\n", end - start);
    for (size_t i = start; i < end; ++i) cmap += ranges[i] + "\n";
    cmap += "endbfrange\n";
  }
  cmap +=
      "endcmap\n"
      "CMapName currentdict /CMap defineresource pop\n"
      "end\n"
      "end\n";
  return cmap;
}

void RepairToUnicode(HPDF_Font font) {
  Check(font != nullptr && font->attr != nullptr, "repairing a font's ToUnicode map (no font)");
  auto* attr = static_cast<HPDF_FontAttr>(font->attr);
  Check(attr->type == HPDF_FONT_TYPE0_TT && attr->cmap_stream != nullptr &&
            attr->cmap_stream->stream != nullptr && attr->descendant_font != nullptr,
        "repairing a font's ToUnicode map (not a UTF-8 TrueType font)");
  HPDF_Dict cmap = attr->cmap_stream;
  Check(HPDF_Dict_GetItem(font, "ToUnicode", HPDF_OCLASS_DICT) == cmap,
        "repairing a font's ToUnicode map (no ToUnicode stream)");
  // A ToUnicode stream is a plain CMap stream: the CID-CMap keys libharu set go.
  for (const char* key : {"Type", "CMapName", "CIDSystemInfo", "WMode"}) {
    HPDF_Dict_RemoveElement(cmap, key);  // HPDF_DICT_ITEM_NOT_FOUND is fine
  }
  HPDF_MemStream_FreeData(cmap->stream);
  const std::string text = IdentityToUnicodeCMap();
  Check(HPDF_Stream_Write(cmap->stream, reinterpret_cast<const HPDF_BYTE*>(text.data()),
                          static_cast<HPDF_UINT>(text.size())) == HPDF_OK,
        "writing a ToUnicode map");
  // The CIDFont's character collection: "Identity" (ISO 32000-1 §9.7.3; "Identity-H" is the
  // name of the CMap, not of an ordering).
  auto* info = static_cast<HPDF_Dict>(
      HPDF_Dict_GetItem(attr->descendant_font, "CIDSystemInfo", HPDF_OCLASS_DICT));
  Check(info != nullptr, "repairing a font's CIDSystemInfo");
  Check(
      HPDF_Dict_Add(info, "Ordering", HPDF_String_New(font->mmgr, "Identity", nullptr)) == HPDF_OK,
      "repairing a font's CIDSystemInfo");
}

std::string XmpDate(const HPDF_Date& date) { return PdfDate(date) + "Z"; }

std::string XmpPacket(const DocumentIdentity& identity) {
  // The xpacket wrapper (ISO 16684-1 §7.3): the begin attribute holds U+FEFF in UTF-8.
  std::string x = "<?xpacket begin=\"\xEF\xBB\xBF\" id=\"W5M0MpCehiHzreSzNTczkc9d\"?>\n";
  x += "<x:xmpmeta xmlns:x=\"adobe:ns:meta/\">\n";
  x += "<rdf:RDF xmlns:rdf=\"http://www.w3.org/1999/02/22-rdf-syntax-ns#\">\n";
  x += "<rdf:Description rdf:about=\"\" xmlns:dc=\"http://purl.org/dc/elements/1.1/\">\n";
  x += "<dc:format>application/pdf</dc:format>\n";
  x += "<dc:title><rdf:Alt><rdf:li xml:lang=\"x-default\">" + XmlEscape(identity.title) +
       "</rdf:li></rdf:Alt></dc:title>\n";
  x += "<dc:creator><rdf:Seq><rdf:li>" + XmlEscape(identity.author) +
       "</rdf:li></rdf:Seq></dc:creator>\n";
  x += "<dc:description><rdf:Alt><rdf:li xml:lang=\"x-default\">" + XmlEscape(identity.subject) +
       "</rdf:li></rdf:Alt></dc:description>\n";
  x += "</rdf:Description>\n";
  x += "<rdf:Description rdf:about=\"\" xmlns:xmp=\"http://ns.adobe.com/xap/1.0/\">\n";
  x += "<xmp:CreatorTool>" + XmlEscape(identity.creator) + "</xmp:CreatorTool>\n";
  if (identity.date) {
    x += "<xmp:CreateDate>" + XmpDate(*identity.date) + "</xmp:CreateDate>\n";
    x += "<xmp:ModifyDate>" + XmpDate(*identity.date) + "</xmp:ModifyDate>\n";
  }
  x += "</rdf:Description>\n";
  x += "<rdf:Description rdf:about=\"\" xmlns:pdf=\"http://ns.adobe.com/pdf/1.3/\">\n";
  x += "<pdf:Producer>" + XmlEscape(identity.producer) + "</pdf:Producer>\n";
  x += "</rdf:Description>\n";
  x += "</rdf:RDF>\n</x:xmpmeta>\n";
  x += "<?xpacket end=\"r\"?>";
  return x;
}

void WriteDocumentIdentity(HPDF_Doc pdf, const DocumentIdentity& identity) {
  Check(pdf != nullptr, "writing the document information (no document)");
  HPDF_STATUS status = HPDF_OK;
  status |= HPDF_SetInfoAttr(pdf, HPDF_INFO_TITLE, identity.title.c_str());
  status |= HPDF_SetInfoAttr(pdf, HPDF_INFO_AUTHOR, identity.author.c_str());
  status |= HPDF_SetInfoAttr(pdf, HPDF_INFO_SUBJECT, identity.subject.c_str());
  status |= HPDF_SetInfoAttr(pdf, HPDF_INFO_CREATOR, identity.creator.c_str());
  status |= HPDF_SetInfoAttr(pdf, HPDF_INFO_PRODUCER, identity.producer.c_str());
  if (identity.date) {
    status |= HPDF_SetInfoDateAttr(pdf, HPDF_INFO_CREATION_DATE, *identity.date);
    status |= HPDF_SetInfoDateAttr(pdf, HPDF_INFO_MOD_DATE, *identity.date);
  }
  Check(status == HPDF_OK, "writing the document information");

  // XMP metadata: an unfiltered stream in the catalog (ISO 19005-1 §6.7.2, §6.7.3).
  HPDF_Dict xmp = HPDF_DictStream_New(pdf->mmgr, pdf->xref);
  Check(xmp != nullptr, "creating the XMP metadata stream");
  xmp->filter = HPDF_STREAM_FILTER_NONE;
  const std::string packet = XmpPacket(identity);
  status |= HPDF_Dict_AddName(xmp, "Type", "Metadata");
  status |= HPDF_Dict_AddName(xmp, "Subtype", "XML");
  status |= HPDF_Stream_Write(xmp->stream, reinterpret_cast<const HPDF_BYTE*>(packet.data()),
                              static_cast<HPDF_UINT>(packet.size()));
  status |= HPDF_Dict_Add(pdf->catalog, "Metadata", xmp);
  Check(status == HPDF_OK, "writing the XMP metadata");

  // File identifier: a function of what the document says, never of the clock.
  std::string basis = identity.title + '\n' + identity.author + '\n' + identity.subject + '\n' +
                      identity.creator + '\n' + identity.producer + '\n';
  if (identity.date) basis += XmpDate(*identity.date);
  const std::string digest_hex = Sha256Hex(basis);
  std::array<HPDF_BYTE, kFileIdBytes> id{};
  for (size_t i = 0; i < kFileIdBytes; ++i) {
    id[i] = static_cast<HPDF_BYTE>(std::stoi(digest_hex.substr(2 * i, 2), nullptr, 16));
  }
  HPDF_Array ids = HPDF_Array_New(pdf->mmgr);
  Check(ids != nullptr, "writing the file identifier");
  status |= HPDF_Array_Add(ids, HPDF_Binary_New(pdf->mmgr, id.data(), kFileIdBytes));
  status |= HPDF_Array_Add(ids, HPDF_Binary_New(pdf->mmgr, id.data(), kFileIdBytes));
  status |= HPDF_Dict_Add(pdf->trailer, "ID", ids);
  Check(status == HPDF_OK, "writing the file identifier");
  pdf->pdf_version = HPDF_VER_14;  // XMP metadata streams are PDF 1.4
}

void AddOutputIntent(HPDF_Doc pdf, const std::filesystem::path& icc_profile) {
  const std::string expected =
      "an RGB display ICC profile of version 2 (Debian package icc-profiles-free)";
  const std::string bytes =
      ReadRegularFileUpTo(icc_profile, icc_profile.string(), kIccMaxBytes, expected);
  const bool valid = bytes.size() >= kIccHeaderBytes &&
                     bytes.compare(kIccSignatureOffset, 4, "acsp") == 0 &&
                     bytes.compare(kIccClassOffset, 4, "mntr") == 0 &&
                     bytes.compare(kIccSpaceOffset, 4, "RGB ") == 0 &&
                     static_cast<unsigned char>(bytes[kIccVersionByte]) == kIccMajorVersionForPdf14;
  if (!valid) {
    throw InputError(SourceLocation{icc_profile.string(), 0, 0}, "not a usable ICC profile",
                     expected);
  }
  HPDF_STATUS status = HPDF_OK;
  HPDF_Dict icc = HPDF_DictStream_New(pdf->mmgr, pdf->xref);
  Check(icc != nullptr, "embedding the ICC profile");
  icc->filter = HPDF_STREAM_FILTER_FLATE_DECODE;
  status |= HPDF_Dict_AddNumber(icc, "N", 3);  // RGB: three components
  status |= HPDF_Stream_Write(icc->stream, reinterpret_cast<const HPDF_BYTE*>(bytes.data()),
                              static_cast<HPDF_UINT>(bytes.size()));
  Check(status == HPDF_OK, "embedding the ICC profile");

  // ISO 19005-1 §6.2.2: an output intent with subtype GTS_PDFA1 and its profile.
  HPDF_Dict intent = HPDF_Dict_New(pdf->mmgr);
  Check(intent != nullptr && HPDF_Xref_Add(pdf->xref, intent) == HPDF_OK,
        "writing the output intent");
  // The registered condition of the ICC registry (www.color.org) that sRGB.icc describes.
  constexpr const char* kCondition = "sRGB IEC61966-2.1";
  status |= HPDF_Dict_AddName(intent, "Type", "OutputIntent");
  status |= HPDF_Dict_AddName(intent, "S", "GTS_PDFA1");
  status |= HPDF_Dict_Add(intent, "OutputConditionIdentifier",
                          HPDF_String_New(pdf->mmgr, kCondition, nullptr));
  status |= HPDF_Dict_Add(intent, "Info", HPDF_String_New(pdf->mmgr, kCondition, nullptr));
  status |= HPDF_Dict_Add(intent, "RegistryName",
                          HPDF_String_New(pdf->mmgr, "http://www.color.org", nullptr));
  status |= HPDF_Dict_Add(intent, "DestOutputProfile", icc);
  HPDF_Array intents = HPDF_Array_New(pdf->mmgr);
  Check(intents != nullptr, "writing the output intent");
  status |= HPDF_Array_Add(intents, intent);
  status |= HPDF_Dict_Add(pdf->catalog, "OutputIntents", intents);
  Check(status == HPDF_OK, "writing the output intent");
}

}  // namespace sorbtrace::report::internal
