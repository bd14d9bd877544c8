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
