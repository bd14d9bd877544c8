#include "app/cli.hpp"

#include <algorithm>
#include <cctype>
#include <filesystem>
#include <iostream>
#include <optional>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "app/demo.hpp"
#include "app/forecast.hpp"
#include "app/inspect.hpp"
#include "app/maps.hpp"
#include "app/measure.hpp"
#include "app/out_dir.hpp"
#include "app/synth.hpp"
#include "fit/strict_json.hpp"
#include "imaging/input_error.hpp"
#include "app/view.hpp"
#include "imaging/fits.hpp"

namespace occulta::app {

namespace {

void err_usage(const std::string& what) {
  std::string text = what;
  if (!text.empty() && text.back() != '.' && text.back() != ')' && text.back() != '?') text += '.';
  std::cerr << "occulta: usage: " << text << '\n';
}

std::string verb_list(const std::vector<CLI::App*>& verbs) {
  std::string text;
  for (const CLI::App* v : verbs) text += (text.empty() ? "" : ", ") + v->get_name();
  return text;
}

// The first unknown verb or option name in argv, as a sentence; nullopt when all known.
// Option values are not judged here (CLI11 does that); a token is taken for an option
// name when it starts with "--", or with "-" and a letter.
std::optional<std::string> usage_fault(int argc, char** argv, const std::vector<CLI::App*>& verbs) {
  if (argc < 2) return std::nullopt;
  const std::string first = argv[1];
  if (first.starts_with("-")) return std::nullopt;  // --help, --version, or CLI11 names the rest
  std::vector<std::string> names;
  CLI::App* verb = nullptr;
  for (CLI::App* v : verbs) {
    names.push_back(v->get_name());
    if (v->get_name() == first) verb = v;
  }
  if (!verb) {
    const std::string near = fit::nearest_word(first, names);
    return "unknown verb `" + first + "`" + (near.empty() ? "" : " — did you mean `" + near + "`?") +
           (near.empty() ? "; the verbs are " : " The verbs are ") + verb_list(verbs);
  }
  std::vector<std::string> options = {"--help", "-h"};
  for (const CLI::Option* o : verb->get_options()) {
    for (const std::string& l : o->get_lnames()) options.push_back("--" + l);
    for (const std::string& s : o->get_snames()) options.push_back("-" + s);
  }
  for (int i = 2; i < argc; ++i) {
    std::string token = argv[i];
    if (token == "--") break;
    const bool long_name = token.starts_with("--");
    const bool short_name = token.size() > 1 && token[0] == '-' && std::isalpha(static_cast<unsigned char>(token[1]));
    if (!long_name && !short_name) continue;
    token = token.substr(0, token.find('='));
    if (std::find(options.begin(), options.end(), token) != options.end()) continue;
    const std::string near = fit::nearest_word(token, options);
    return "`" + first + "` has no option `" + token + "`" + (near.empty() ? "" : " — did you mean `" + near + "`?") +
           (near.empty() ? "; see" : " See") + " `occulta " + first + " --help`";
  }
  return std::nullopt;
}

}  // namespace

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
  maps_cmd->add_option("--pa", maps_options.pa_deg, "Time-height maps at these position angles (deg, 0-360)")
      ->check(CLI::Range(0.0, 360.0));
  maps_cmd->add_option("--pa-step", maps_options.pa_step_deg, "Position-angle step of the polar grid (deg)")
      ->capture_default_str()->check(CLI::Range(0.05, 10.0));
  maps_cmd->add_option("--height-step", maps_options.height_step_rs, "Height step of the polar grid (R☉; 0 = pixel)")
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
  measure_cmd->add_option("--track", measure_options.track, "Track file whose points replace the automatic ones");
  measure_cmd->add_option("--median", measure_options.measurement.median, "Median filter size against cosmic rays (0, 3 or 5)")
      ->capture_default_str()->check(CLI::IsMember({0, 3, 5}));
  measure_cmd->add_option("--apex-law", measure_options.measurement.apex_law,
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

  ViewOptions view_options;
  auto* view_cmd = cli.add_subcommand("view", "Open the analyst's window on an event, or draw it into a PNG (--snapshot)");
  view_cmd->add_option("input", view_options.input, "Event file (*.event.json) or a folder of FITS frames")->required();
  view_cmd->add_option("--snapshot", view_options.snapshot, "Draw the window into this PNG instead (no display needed)");
  view_cmd->add_option("--size", view_options.size, "Window size WIDTHxHEIGHT in pixels")->capture_default_str();
  view_cmd->add_option("--script", view_options.script, "JSON list of window actions to apply first");
  view_cmd->add_option("--median", view_options.median, "Median filter size against cosmic rays (0, 3 or 5)")
      ->capture_default_str()->check(CLI::IsMember({0, 3, 5}));

  // FITS checksums (FITS Standard 4.0 §4.4.2.7): a mismatch is refused unless asked.
  bool checksum_warn_only = false;
  for (CLI::App* reads_fits : {inspect_cmd, maps_cmd, measure_cmd, demo_cmd, view_cmd})
    reads_fits->add_flag("--checksum-warn-only", checksum_warn_only,
                         "Read FITS files whose CHECKSUM/DATASUM do not match, with a warning (default: refuse them)");

  // Before CLI11 parses: an unknown verb or option names itself and the nearest known
  // one (CLI11 would first complain of something else, such as a missing --out).
  std::vector<CLI::App*> verbs = cli.get_subcommands({});
  if (const std::optional<std::string> fault = usage_fault(argc, argv, verbs)) {
    err_usage(*fault);
    return 2;
  }
  try {
    cli.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return cli.exit(e);
  } catch (const CLI::RequiredError& e) {
    if (argc < 2) {
      err_usage("a verb is required: " + verb_list(verbs) + " (see `occulta --help`)");
      return 2;
    }
    err_usage(std::string("`") + argv[1] + "` needs more: " + e.what() + " (see `occulta " + argv[1] + " --help`)");
    return 2;
  } catch (const CLI::ParseError& e) {
    err_usage(std::string(e.what()) + (argc > 1 ? std::string(" (see `occulta ") + argv[1] + " --help`)" : ""));
    return 2;
  }

  if (checksum_warn_only) imaging::set_checksum_policy(imaging::ChecksumPolicy::Warn);
  // Exit codes (README "Exit codes"): a fault named by an option is usage (2); a fault of
  // a file or folder, given as an argument or as an option's value, is an input problem (1).
  try {
    if (*inspect_cmd) return inspect(inspect_options, std::cout, std::cerr);
    if (*synth_cmd) {
      check_out_dir(synth_options.out_dir);
      return synth(synth_options, std::cout, std::cerr);
    }
    if (*maps_cmd) {
      check_out_dir(maps_options.out_dir);
      return maps(maps_options, std::cout, std::cerr);
    }
    if (*measure_cmd) {
      check_out_dir(measure_options.out_dir);
      return measure(measure_options, std::cout, std::cerr);
    }
    if (*forecast_cmd) {
      if (!forecast_options.out_dir.empty()) check_out_dir(forecast_options.out_dir);
      return forecast(forecast_options, std::cout, std::cerr);
    }
    if (*demo_cmd) {
      check_out_dir(demo_options.out_dir);
      return demo(demo_options, std::cout, std::cerr);
    }
    if (*view_cmd) return view(view_options, std::cout, std::cerr);
  } catch (const imaging::InputError& e) {
    if (e.source().starts_with("--")) {
      err_usage(e.what());
      return 2;
    }
    std::cerr << "occulta: error: " << e.what() << '\n';
    return 1;
  } catch (const std::filesystem::filesystem_error& e) {
    // The library's text names its own function; say which path and why in our words.
    std::cerr << "occulta: error: " << e.path1().string() << ": " << e.code().message() << ".\n";
    return 1;
  } catch (const std::bad_alloc&) {
    std::cerr << "occulta: error: ran out of memory; try fewer or smaller frames.\n";
    return 1;
  } catch (const std::exception&) {
    std::cerr << "occulta: error: stopped by an unexpected internal fault (a defect of occulta; please report "
                 "the command that caused it).\n";
    return 1;
  }
  return 2;
}

}  // namespace occulta::app
