#include "pipeline/run/audit.h"

#include <gtest/gtest.h>

namespace sorbtrace::run {
namespace {

TEST(AuditCompareTest, IdenticalDocumentsPassEveryLeaf) {
  const auto doc = nlohmann::json::parse(R"({"a": 1.5, "b": {"c": [1, 2, "x"]}, "d": true})");
  const auto lines = CompareResults(doc, doc);
  ASSERT_EQ(lines.size(), 5u);
  for (const auto& line : lines) EXPECT_TRUE(line.passed) << line.pointer;
}

TEST(AuditCompareTest, ChangedNumberFailsAndNamesItsPointer) {
  const auto reported = nlohmann::json::parse(R"({"fits": [{"value": 0.0523}]})");
  const auto recomputed = nlohmann::json::parse(R"({"fits": [{"value": 0.0524}]})");
  const auto lines = CompareResults(reported, recomputed);
  ASSERT_EQ(lines.size(), 1u);
  EXPECT_FALSE(lines[0].passed);
  EXPECT_EQ(lines[0].pointer, "/fits/0/value");
  EXPECT_EQ(lines[0].reported, "0.0523");
}

TEST(AuditCompareTest, DifferenceInsideToleranceVersusOutside) {
  const double x = 0.123456789;
  const auto a = nlohmann::json{{"v", x}};
  const auto inside = nlohmann::json{{"v", x * (1 + 0.5 * kAuditRelativeTolerance)}};
  const auto outside = nlohmann::json{{"v", x * (1 + 10 * kAuditRelativeTolerance)}};
  EXPECT_TRUE(CompareResults(a, inside)[0].passed);
  EXPECT_FALSE(CompareResults(a, outside)[0].passed);
}

TEST(AuditCompareTest, MissingAndExtraKeysFail) {
  const auto a = nlohmann::json::parse(R"({"x": 1, "y": [1, 2]})");
  const auto b = nlohmann::json::parse(R"({"x": 1, "y": [1], "z": "new"})");
  int failed = 0;
  for (const auto& line : CompareResults(a, b)) failed += line.passed ? 0 : 1;
  EXPECT_EQ(failed, 2);  // /y/1 missing, /z extra
}

TEST(AuditCompareTest, ChangedTextFails) {
  const auto a = nlohmann::json{{"class", "hygroscopic"}};
  const auto b = nlohmann::json{{"class", "slightly hygroscopic"}};
  EXPECT_FALSE(CompareResults(a, b)[0].passed);
}

}  // namespace
}  // namespace sorbtrace::run
