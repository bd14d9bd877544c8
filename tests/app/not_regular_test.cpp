// Inputs that are not regular files (a FIFO here) are refused with one sentence, never
// read: a FIFO with no writer would block its reader for ever. Each command is bounded by
// timeout(1) only so that a regression fails instead of hanging the suite.
#include <sys/stat.h>

#include <doctest/doctest.h>

#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace {
using occulta::test::shell_quote;

std::string occulta_command(const std::string& arguments) {
  return "timeout 60 " + shell_quote(occulta::test::occulta_binary().string()) + " " + arguments;
}
}  // namespace

TEST_CASE("not regular: an event file or a frame that is a FIFO is refused with a sentence, not read") {
  const auto work = occulta::test::scratch_dir("not_regular");
  const auto fifo = work / "hang.event.json";
  REQUIRE(mkfifo(fifo.c_str(), 0644) == 0);
  CHECK_THROWS_WITH_AS(occulta::fit::read_json_file(fifo),
                       (fifo.string() + ": is not a regular file (a FIFO, socket or device), so it is not read.").c_str(),
                       occulta::imaging::InputError);

  const auto measured = occulta::test::run_command(occulta_command("measure " + shell_quote(fifo.string()) + " --out " +
                                                                    shell_quote((work / "out").string()) + " 2>&1"));
  CHECK(measured.exit_code == 1);
  CHECK(measured.output.find("occulta: error: " + fifo.string() + ": is not a regular file") != std::string::npos);

  const auto frame = work / "frame.fits";
  REQUIRE(mkfifo(frame.c_str(), 0644) == 0);
  const auto inspected = occulta::test::run_command(occulta_command("inspect " + shell_quote(frame.string()) + " 2>&1"));
  INFO(inspected.output);
  CHECK(inspected.exit_code == 1);
  CHECK(inspected.output.find(frame.string() + ": NOT USABLE: it is not a regular file") != std::string::npos);
}
