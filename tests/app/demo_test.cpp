// `occulta demo` on the committed sample: every frame usable, one line per view.
#include <doctest/doctest.h>

#include "tests/support/support.hpp"

TEST_CASE("demo: summarises the committed sample event, every frame usable") {
  using occulta::test::shell_quote;
  const auto run = occulta::test::run_command("cd " + shell_quote(occulta::test::source_path("").string()) + " && " +
                                              shell_quote(occulta::test::occulta_binary().string()) + " demo");
  INFO(run.output);
  CHECK(run.exit_code == 0);
  CHECK(run.output.find("sample event \"sample-2031-03-14\"") != std::string::npos);
  CHECK(run.output.find("east         16     16  2031-03-14T06:00:00") != std::string::npos);
  CHECK(run.output.find("west         16     16  2031-03-14T06:00:00") != std::string::npos);
  CHECK(run.output.find("problem") == std::string::npos);
}
