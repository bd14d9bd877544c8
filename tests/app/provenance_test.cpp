// Provenance: SHA-256 of the inputs.
#include <fstream>

#include <doctest/doctest.h>

#include "app/provenance.hpp"
#include "tests/support/support.hpp"

TEST_CASE("provenance: SHA-256 of a file matches FIPS 180-4's example and Debian's sha256sum") {
  const auto dir = occulta::test::scratch_dir("provenance_sha");
  const auto path = dir / "abc.txt";
  std::ofstream(path, std::ios::binary) << "abc";
  // FIPS 180-4 / its published examples: SHA-256("abc").
  CHECK(occulta::app::sha256_file(path) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  // coreutils' sha256sum on a frame of the committed sample.
  const auto frame = occulta::test::source_path("sample_frames/east/east_000.fits");
  const auto sum = occulta::test::run_command("sha256sum " + occulta::test::shell_quote(frame.string()));
  REQUIRE(sum.exit_code == 0);
  CHECK(sum.output.substr(0, 64) == occulta::app::sha256_file(frame));
}

TEST_CASE("provenance: SHA-256 taken ahead are used, what was missed is read, an unreadable input still named") {
  const auto dir = occulta::test::scratch_dir("provenance_known");
  std::ofstream(dir / "abc.txt", std::ios::binary) << "abc";
  std::ofstream(dir / "late.txt", std::ios::binary) << "abc";
  // Taken ahead: the readable file; the missing one left out, not an error.
  const occulta::app::KnownSha256 known = occulta::app::sha256_files({dir / "abc.txt", dir / "missing.txt"});
  REQUIRE(known.size() == 1);
  CHECK(known.at(dir / "abc.txt") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  // A file changed after its hash was taken keeps the hash taken (it was not read again);
  // one not taken ahead is read now.
  std::ofstream(dir / "abc.txt", std::ios::binary) << "changed";
  const nlohmann::json p = occulta::app::provenance({dir / "abc.txt", dir / "late.txt"}, nlohmann::json::object(), 1.0, known);
  CHECK(p["inputs"][0]["sha256"] == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  CHECK(p["inputs"][1]["sha256"] == occulta::app::sha256_file(dir / "late.txt"));
  // The missing file is named by provenance itself, as without hashes taken ahead.
  try {
    (void)occulta::app::provenance({dir / "missing.txt"}, nlohmann::json::object(), 1.0, known);
    FAIL("a missing input must be an error");
  } catch (const std::exception& e) {
    CHECK(std::string(e.what()).find("missing.txt") != std::string::npos);
  }
}
