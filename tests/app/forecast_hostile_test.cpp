// tests/app/forecast_hostile_test.cpp — forecast on a result whose covariance is absurd
// (../shared/repro/forecast-hang-huge-covariance.result.json, in the result_fuzz corpus):
// once a hang with --out (the histogram's tick loop) and arrival years near −8×10⁸
// without; now one sentence and exit 1, in bounded time, either way.
#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <string>

#include <nlohmann/json.hpp>

#include "tests/support/support.hpp"

namespace {
using occulta::test::run_command;
using occulta::test::shell_quote;

std::string forecast_command(const std::string& arguments) {
  // timeout(1) bounds the run, so that a regression fails here rather than hanging the suite.
  return "timeout 120 " + shell_quote(occulta::test::occulta_binary().string()) + " forecast " + arguments;
}

}  // namespace

TEST_CASE("forecast hostile: a covariance giving the speed a variance of 1e30 is refused with one sentence") {
  const std::string result =
      occulta::test::source_path("tests/fuzz/corpus/result_fuzz/repro-forecast-hang-huge-covariance.result.json").string();
  const auto out = occulta::test::scratch_dir("forecast_hostile");
  for (const std::string& extra : {std::string(""), " --out " + shell_quote(out.string())}) {
    const auto run = run_command(forecast_command(shell_quote(result) + extra));
    INFO(run.output);
    CHECK(run.exit_code == 1);  // not 124 (timeout) and not 0
    CHECK(run.output.find("standard deviation") != std::string::npos);
    CHECK(run.output.find("-8") == std::string::npos);
    CHECK(std::count(run.output.begin(), run.output.end(), '\n') == 1);
  }
  CHECK(!std::filesystem::exists(out / "arrival.json"));
}

TEST_CASE("forecast hostile: the ensemble size is bounded; the reproducer with a sane variance runs") {
  // The reproducer with the speed's variance its σ in the file squared (14.7 km/s).
  nlohmann::json doc = nlohmann::json::parse(occulta::test::slurp(
      occulta::test::source_path("tests/fuzz/corpus/result_fuzz/repro-forecast-hang-huge-covariance.result.json")));
  doc["shell"]["covariance"]["matrix"][6][6] = 217.0;
  const auto dir = occulta::test::scratch_dir("forecast_hostile_members");
  const std::string result = (dir / "sane.result.json").string();
  occulta::test::spit(result, doc.dump());
  const auto sane = run_command(forecast_command(shell_quote(result) + " --members 200 --out " + shell_quote((dir / "out").string())));
  INFO(sane.output);
  CHECK(sane.exit_code == 0);
  CHECK(std::filesystem::exists(dir / "out" / "arrival.json"));
  // The command line bounds it (CLI11's range check: a usage error, exit 2).
  for (const char* members : {"0", "-5", "10000001"}) {
    const auto run = run_command(forecast_command(shell_quote(result) + " --members " + members));
    INFO(run.output);
    CHECK(run.exit_code == 2);
    CHECK(run.output.find("--members") != std::string::npos);
  }
}
