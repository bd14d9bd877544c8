// tests/fuzz/result_fuzz.cpp — libFuzzer target: a result.json as forecast reads it
// (fit/json_file.cpp read_json_file, fit/arrival_json.cpp read_arrival_input and
// read_forecast_block), then the arrival histogram it would draw: any bytes must end in a
// result or an InputError, in bounded time (a huge covariance once hung the histogram).
#include "app/arrival_picture.hpp"
#include "fit/arrival.hpp"
#include "fit/arrival_json.hpp"
#include "fit/json_file.hpp"
#include "tests/fuzz/json_fuzz.hpp"

namespace {

void read_result(const std::filesystem::path& path) {
  using namespace occulta;
  const nlohmann::json result = fit::read_json_file(path);
  const fit::ArrivalInput input = fit::read_arrival_input(result, path.string());
  const fit::ForecastSettings settings =
      fit::read_forecast_block(result.is_object() && result.contains("forecast") ? result["forecast"] : nlohmann::json(),
                               input.launch.boundary_utc_s, path.string());
  fit::EnsembleOptions ensemble;
  ensemble.members = 64;  // small: the harness's time, not a product limit
  ensemble.priors = settings.priors;
  for (const fit::TargetArrival& arrival :
       fit::forecast_arrivals(input.launch, input.covariance, settings.targets, ensemble))
    app::arrival_histogram(arrival, input.launch.boundary_utc_s);
}

}  // namespace

OCCULTA_JSON_FUZZ_TARGET("fuzz.result.json", read_result)
