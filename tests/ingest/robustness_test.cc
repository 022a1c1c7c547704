// Damaged files never crash the readers: every random mutation of a valid fixture is either
// read or rejected with an InputError (never another exception, never a crash under the
// sanitizer build). Deterministic: fixed seed.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

const std::string kFixtures = "tests/ingest/fixtures/";

// Replaces, inserts or deletes a few bytes, or truncates the text.
std::string Mutate(std::string text, std::mt19937_64& rng) {
  const std::string alphabet = ",;\"\r\n.-+e0123456789 #%:Tx\xEF\xBB\xBF";
  const int edits = 1 + static_cast<int>(rng() % 4);
  for (int i = 0; i < edits && !text.empty(); ++i) {
    const std::size_t at = rng() % text.size();
    const char c = alphabet[rng() % alphabet.size()];
    switch (rng() % 4) {
      case 0:
        text[at] = c;
        break;
      case 1:
        text.insert(at, 1, c);
        break;
      case 2:
        text.erase(at, 1);
        break;
      default:
        text.resize(at);
        break;
    }
  }
  return text;
}

class MutationTest : public ::testing::Test {
 protected:
  void SetUp() override {
    path_ = std::filesystem::temp_directory_path() /
            ("sorbtrace_ingest_mutation_" + std::to_string(::getpid()) + ".csv");
  }
  void TearDown() override { std::filesystem::remove(path_); }

  // Runs `read` on `trials` mutations of `fixture`; returns how many were accepted.
  template <typename ReadFn>
  int Run(const std::string& fixture, int trials, ReadFn read) {
    std::mt19937_64 rng(20261201);
    const std::string original = ReadWholeFile(kFixtures + fixture);
    int accepted = 0;
    for (int trial = 0; trial < trials; ++trial) {
      const std::string mutated = Mutate(original, rng);
      {
        std::ofstream out(path_, std::ios::binary | std::ios::trunc);
        out << mutated;
      }
      try {
        read(path_);
        ++accepted;
      } catch (const InputError& error) {
        EXPECT_FALSE(error.diagnostic().message.empty());
        EXPECT_EQ(error.diagnostic().where.file, path_.string());
      } catch (const std::exception& error) {
        ADD_FAILURE() << "not an InputError: " << error.what() << "\n--- input:\n" << mutated;
      }
    }
    return accepted;
  }

  std::filesystem::path path_;
};

JobSpec Job() {
  JobSpec job;
  job.specimens.push_back(SpecimenSpec{"P1", 24.0, std::nullopt, {}});
  job.specimens.push_back(SpecimenSpec{"P2", 31.0, std::nullopt, {}});
  return job;
}

TEST_F(MutationTest, DesiccatorFile) {
  const JobSpec job = Job();
  const int accepted = Run("desiccator.csv", 400, [&](const std::filesystem::path& path) {
    DataSetSpec dataset;
    dataset.file = path;
    ReadDesiccatorSeries(job, dataset);
  });
  EXPECT_LT(accepted, 400);  // the mutations do damage the file
}

TEST_F(MutationTest, VaporLog) {
  const int accepted = Run("vapour_log.csv", 400, [&](const std::filesystem::path& path) {
    DataSetSpec dataset;
    dataset.file = path;
    ReadVaporLog(dataset, IngestOptions{}, nullptr);
  });
  EXPECT_LT(accepted, 400);
}

TEST_F(MutationTest, RetentionFile) {
  const JobSpec job = Job();
  const int accepted = Run("retention.csv", 300, [&](const std::filesystem::path& path) {
    DataSetSpec dataset;
    dataset.file = path;
    ReadRetentionPoints(job, dataset);
  });
  EXPECT_LT(accepted, 300);
}

TEST_F(MutationTest, EuropeanDesiccatorFile) {
  const JobSpec job = Job();
  const int accepted = Run("desiccator_european.csv", 300, [&](const std::filesystem::path& path) {
    DataSetSpec dataset;
    dataset.file = path;
    dataset.format.delimiter = ';';
    dataset.format.decimal_comma = true;
    dataset.format.datetime_format = "%d.%m.%Y %H:%M";
    ReadDesiccatorSeries(job, dataset);
  });
  EXPECT_LT(accepted, 300);
}

}  // namespace
}  // namespace sorbtrace::ingest
