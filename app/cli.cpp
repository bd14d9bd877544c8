#include "app/cli.hpp"

#include <iostream>

#include <CLI/CLI.hpp>

#include "app/demo.hpp"
#include "app/forecast.hpp"
#include "app/inspect.hpp"
#include "app/maps.hpp"
#include "app/measure.hpp"
#include "app/synth.hpp"
#include "imaging/fits.hpp"

namespace occulta::app {

int run(int argc, char** argv) {
  CLI::App cli{"occulta — measure coronal mass ejections in coronagraph frames"};
  cli.set_version_flag("--version", std::string("occulta ") + OCCULTA_VERSION);
  cli.require_subcommand(1);

  InspectOptions inspect_options;
  auto* inspect_cmd = cli.add_subcommand("inspect", "Report what each FITS file holds and whether it is usable");
  inspect_cmd->add_option("paths", inspect_options.paths, "FITS files, or folders searched recursively")
      ->required();
  inspect_cmd->add_flag("--json", inspect_options.json, "Print a JSON array instead of a line per file");

  SynthOptions synth_options;
  auto* synth_cmd = cli.add_subcommand("synth", "Make synthetic frames, an event file and a truth file from a scenario");
  synth_cmd->add_option("scenario", synth_options.scenario, "Scenario file (*.scenario.json)")->required();
  synth_cmd->add_option("--out", synth_options.out_dir, "Folder to write into (made if missing)")->required();
  synth_cmd->add_flag("--quiet", synth_options.quiet, "No progress line");

  MapsOptions maps_options;
  auto* maps_cmd = cli.add_subcommand("maps", "Polar running differences and time-height maps of an event's views");
  maps_cmd->add_option("event", maps_options.event, "Event file (*.event.json)")->required();
  maps_cmd->add_option("--out", maps_options.out_dir, "Folder to write into (made if missing)")->required();
  maps_cmd->add_option("--pa", maps_options.pa_deg, "Time-height maps at these position angles (deg)");
  maps_cmd->add_option("--pa-step", maps_options.pa_step_deg, "Position-angle step of the polar grid (deg)")
      ->capture_default_str()->check(CLI::Range(0.05, 10.0));
  maps_cmd->add_option("--height-step", maps_options.height_step_rs, "Height step of the polar grid (R_sun; 0 = pixel)")
      ->capture_default_str()->check(CLI::Range(0.0, 2.0));
  maps_cmd->add_option("--median", maps_options.median, "Median filter size against cosmic rays (0, 3 or 5)")
      ->capture_default_str()->check(CLI::IsMember({0, 3, 5}));
  maps_cmd->add_flag("--nrgf", maps_options.nrgf, "Also write an NRGF-filtered polar frame (Morgan et al. 2006)");

  MeasureOptions measure_options;
  auto* measure_cmd = cli.add_subcommand(
      "measure", "Find the CME in each view, fit its sky-plane kinematics, one shell over all views, and its arrival");
  measure_cmd->add_option("input", measure_options.input, "Event file (*.event.json) or a folder of FITS frames")
      ->required();
  measure_cmd->add_option("--out", measure_options.out_dir, "Folder to write into (made if missing)")->required();
  measure_cmd->add_option("--track", measure_options.track, "Track file whose points replace the automatic ones")
      ->check(CLI::ExistingFile);
  measure_cmd->add_option("--median", measure_options.median, "Median filter size against cosmic rays (0, 3 or 5)")
      ->capture_default_str()->check(CLI::IsMember({0, 3, 5}));
  measure_cmd->add_option("--apex-law", measure_options.apex_law,
                          "Apex height law of the shell fit: auto (quadratic when every view's own fit is), "
                          "linear, quadratic, or free (one height per time, for checking)")
      ->capture_default_str()->check(CLI::IsMember({"auto", "linear", "quadratic", "free"}));
  measure_cmd->add_flag("--quiet", measure_options.quiet, "No summary table");

  ForecastOptions forecast_options;
  auto* forecast_cmd = cli.add_subcommand("forecast", "Drag-based arrival estimate of a measured CME at Earth, L1 or a point");
  forecast_cmd->add_option("result", forecast_options.result, "Result file (result.json) with shell and boundary blocks")
      ->required();
  forecast_cmd->add_option("--target", forecast_options.targets, "earth, l1 or NAME:LON,LAT,AU (repeatable; default earth)")
      ->expected(1)->multi_option_policy(CLI::MultiOptionPolicy::TakeAll);
  forecast_cmd->add_option("--members", forecast_options.members, "Ensemble members")
      ->capture_default_str()->check(CLI::Range(1, 10000000));
  forecast_cmd->add_option("--seed", forecast_options.seed, "Seed of the ensemble's draws")->capture_default_str();
  forecast_cmd->add_option("--wind", forecast_options.wind, "Ambient wind speed range LO,HI (km/s; default 300,600)");
  forecast_cmd->add_option("--drag", forecast_options.drag, "Drag parameter range LO,HI (per km; default 1e-8,2e-7)");
  forecast_cmd->add_option("--event", forecast_options.event, "Event file whose forecast block gives targets and ranges");
  forecast_cmd->add_option("--out", forecast_options.out_dir, "Folder for arrival.json and the histograms (made if missing)");

  DemoOptions demo_options;
  auto* demo_cmd = cli.add_subcommand("demo", "Run the main job on the committed sample event");
  demo_cmd->add_option("--sample", demo_options.sample_dir, "The sample event's folder")->capture_default_str();
  demo_cmd->add_option("--out", demo_options.out_dir, "Folder for what the demo measures")->capture_default_str();

  // FITS checksums (FITS Standard 4.0 §4.4.2.7): a mismatch is refused unless asked.
  bool checksum_warn_only = false;
  for (CLI::App* reads_fits : {inspect_cmd, maps_cmd, measure_cmd, demo_cmd})
    reads_fits->add_flag("--checksum-warn-only", checksum_warn_only,
                         "Read FITS files whose CHECKSUM/DATASUM do not match, with a warning (default: refuse them)");

  try {
    cli.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return cli.exit(e);
  } catch (const CLI::ParseError& e) {
    cli.exit(e);  // prints the reason and the usage
    return 2;
  }

  if (checksum_warn_only) imaging::set_checksum_policy(imaging::ChecksumPolicy::Warn);
  try {
    if (*inspect_cmd) return inspect(inspect_options, std::cout, std::cerr);
    if (*synth_cmd) return synth(synth_options, std::cout, std::cerr);
    if (*maps_cmd) return maps(maps_options, std::cout, std::cerr);
    if (*measure_cmd) return measure(measure_options, std::cout, std::cerr);
    if (*forecast_cmd) return forecast(forecast_options, std::cout, std::cerr);
    if (*demo_cmd) return demo(demo_options, std::cout, std::cerr);
  } catch (const std::exception& e) {
    std::cerr << "occulta: " << e.what() << '\n';
    return 1;
  }
  return 2;
}

}  // namespace occulta::app
