// `occulta batch` end to end on the shared events of batch_fixture (batch_fixture.hpp):
// the rows and their statuses, the recovered directions against each CME's truth, the
// same results.csv bytes from every way of running (one job, two jobs, concurrent shards
// each killed with kill -9 and resumed, then a merging run; mpirun), results.fits read back by
// astropy and checked by fitsverify, and isolation (a time limit, a killed child).
#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "app/csv.hpp"
#include "fit/json_file.hpp"
#include "imaging/fits_table.hpp"
#include "tests/app/batch/batch_fixture.hpp"
#include "tests/support/support.hpp"

extern char** environ;

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::shell_quote;

using Row = std::map<std::string, std::string>;

std::vector<Row> read_table(const fs::path& csv) {
  std::ifstream in(csv, std::ios::binary);
  std::vector<std::string> header, fields;
  std::size_t line = 0;
  std::vector<Row> rows;
  if (!occulta::app::read_csv_record(in, header, line)) return rows;
  while (occulta::app::read_csv_record(in, fields, line)) {
    Row row;
    for (std::size_t i = 0; i < header.size() && i < fields.size(); ++i) row[header[i]] = fields[i];
    rows.push_back(std::move(row));
  }
  return rows;
}

std::string batch_command(const std::string& arguments) {
  return shell_quote(occulta::test::occulta_binary().string()) + " batch " + arguments;
}

// A batch run in the background, its output to `log`: the test knows its pid exactly.
pid_t start_batch(const std::vector<std::string>& arguments, const fs::path& log) {
  std::vector<std::string> args = {occulta::test::occulta_binary().string(), "batch"};
  args.insert(args.end(), arguments.begin(), arguments.end());
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, 1, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_adddup2(&actions, 1, 2);
  pid_t pid = -1;
  const int failed = posix_spawn(&pid, argv[0], &actions, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&actions);
  REQUIRE(failed == 0);
  return pid;
}

int wait_exit(pid_t pid) {
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
}

// Waits for a condition, looking every 20 ms; false after `limit_s` (a generous bound that
// only turns a hang into a failure — no result depends on timing).
template <typename Condition>
bool wait_until(Condition condition, double limit_s) {
  const auto end = std::chrono::steady_clock::now() + std::chrono::duration<double>(limit_s);
  while (std::chrono::steady_clock::now() < end) {
    if (condition()) return true;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return condition();
}

// Events among `ids` whose child has ended and been stamped (DIR/<id>/batch.json).
std::size_t stamped(const fs::path& dir, const std::vector<std::string>& ids) {
  std::size_t n = 0;
  for (const std::string& id : ids) n += fs::exists(dir / id / "batch.json");
  return n;
}

// Events among `ids` stamped with a result: what a resumed run keeps (app/batch_event.hpp can_skip).
std::size_t stamped_with_result(const fs::path& dir, const std::vector<std::string>& ids) {
  std::size_t n = 0;
  for (const std::string& id : ids) n += fs::exists(dir / id / "batch.json") && fs::exists(dir / id / "result.json");
  return n;
}

// The ids of shard k of n (1-based k): every n-th row of the catalogue (app/batch_run.cpp).
std::vector<std::string> shard_ids(const std::vector<Row>& rows, std::size_t k, std::size_t n) {
  std::vector<std::string> ids;
  for (std::size_t i = k - 1; i < rows.size(); i += n) ids.push_back(rows[i].at("id"));
  return ids;
}

// Processes whose environment names `parent` as their catalogue run's coordinator
// (OCCULTA_BATCH_PARENT, set by app/batch_event.cpp): its measuring children.
std::vector<pid_t> children_of(pid_t parent) {
  std::vector<pid_t> found;
  const std::string mark = "OCCULTA_BATCH_PARENT=" + std::to_string(parent);
  std::error_code error;
  for (fs::directory_iterator it("/proc", error), end; !error && it != end; it.increment(error)) {
    const std::string name = it->path().filename().string();
    if (name.find_first_not_of("0123456789") != std::string::npos) continue;
    std::ifstream in(it->path() / "environ", std::ios::binary);
    std::string entry;
    while (std::getline(in, entry, '\0'))
      if (entry == mark) found.push_back(std::stoi(name));
  }
  return found;
}

// The process whose command line holds `argument` as one of its arguments.
pid_t process_with_argument(const std::string& argument) {
  std::error_code error;
  for (fs::directory_iterator it("/proc", error), end; !error && it != end; it.increment(error)) {
    const std::string name = it->path().filename().string();
    if (name.find_first_not_of("0123456789") != std::string::npos) continue;
    std::ifstream in(it->path() / "cmdline", std::ios::binary);
    std::string arg;
    while (std::getline(in, arg, '\0'))
      if (arg == argument) return std::stoi(name);
  }
  return -1;
}

// Kills a shard's coordinator with SIGKILL at a moment fixed by progress (after `events`
// of its own events are stamped; the shard still has a good event to measure then), checks
// that none of its children lives on (PR_SET_PDEATHSIG), and returns how many of its
// events a resumed run must keep.
std::size_t kill_after(pid_t coordinator, const fs::path& dir, const std::vector<std::string>& ids, std::size_t events) {
  REQUIRE(wait_until([&] { return stamped(dir, ids) >= events; }, 900));
  kill(coordinator, SIGKILL);
  CHECK(wait_exit(coordinator) == 128 + SIGKILL);
  CHECK(wait_until([&] { return children_of(coordinator).empty(); }, 30));
  return stamped_with_result(dir, ids);
}

std::size_t kept_lines(const std::string& log) {
  std::size_t n = 0;
  for (std::size_t at = 0; (at = log.find("(kept from before)", at)) != std::string::npos; ++at) ++n;
  return n;
}

std::string mpirun_prefix(int ranks = 3) {
  // OpenMPI refuses to run as root unless told (its documented environment variables);
  // LeakSanitizer would report OpenMPI's own allocations kept until exit.
  std::string prefix = std::string(OCCULTA_MPIRUN) + " --oversubscribe -n " + std::to_string(ranks) + " ";
  std::string env = "env";
  if (getuid() == 0) env += " OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1";
  const char* asan = std::getenv("ASAN_OPTIONS");
  env += " ASAN_OPTIONS=" + shell_quote(std::string(asan ? asan : "") + (asan ? ":" : "") + "detect_leaks=0");
  return env + " " + prefix;
}

}  // namespace

TEST_CASE("batch: 33 rows with exactly the 3 broken not ok, and the same results.csv every way it runs") {
  // 33 rows in Release; 7 under the sanitizers (batch_fixture.hpp), the same checks.
  const occulta::test::BatchCatalogueSize size = occulta::test::batch_catalogue_size();
  const fs::path events = occulta::test::batch_events_dir();
  const fs::path catalogue = events / "catalogue.csv";
  REQUIRE(fs::exists(catalogue));
  // One folder for every way of running, emptied between them: the table names files by
  // their paths, so the same bytes are expected from the same folder.
  const fs::path work = occulta::test::scratch_dir("batch_same_table");
  const fs::path dir = work / "run";
  const std::string cat = shell_quote(catalogue.string()), out = shell_quote(dir.string());

  // 1. One job: the reference table.
  const auto one = occulta::test::run_command(batch_command(cat + " --out " + out + " --jobs 1"));
  INFO(one.output);
  CHECK(one.exit_code == 1);  // some rows are not ok (README "Exit codes")
  const std::string reference = occulta::test::slurp(dir / "results.csv");
  fs::copy_file(dir / "results.csv", work / "reference.csv", fs::copy_options::overwrite_existing);
  const std::vector<Row> rows = read_table(dir / "results.csv");
  REQUIRE(rows.size() == static_cast<std::size_t>(size.rows()));
  int not_ok = 0;
  for (const Row& r : rows) {
    const std::string id = r.at("id"), status = r.at("status"), problems = r.at("problems");
    CAPTURE(id);
    CAPTURE(problems);
    if (id == "truncated") {
      CHECK(status == "failed");
      CHECK(problems.find("a_001.fits: the file is truncated") != std::string::npos);
    } else if (id == "missing") {
      CHECK(status == "failed");
      CHECK(problems.find("no files match") != std::string::npos);
    } else if (id == "no-observer") {
      CHECK(status == "failed");
      CHECK(problems.find("HGLN_OBS, HGLT_OBS and DSUN_OBS are missing") != std::string::npos);
    } else {
      CHECK(status == "ok");
      CHECK(r.at("cme") == "1");
      // Against the truth of occulta synth (our forward model, not an outside source). The
      // tolerance is the shell fit's own: its stated σ (3σ), or the 4° of the shell fit's
      // end-to-end test (tests/app/shell_measure_test.cpp) where σ is smaller. These
      // 96-pixel frames leave some directions loose (σ up to ~9°).
      const json truth = occulta::fit::read_json_file(events / r.at("truth"))["shell"];
      const double lon = std::stod(r.at("shell_lon_deg")), lat = std::stod(r.at("shell_lat_deg"));
      const double lon_tol = std::max(4.0, 3 * std::stod(r.at("shell_lon_deg_sigma")));
      const double lat_tol = std::max(4.0, 3 * std::stod(r.at("shell_lat_deg_sigma")));
      CAPTURE(lon);
      CAPTURE(lat);
      CHECK(std::abs(std::remainder(lon - truth["lon_deg"].get<double>(), 360.0)) <= lon_tol);
      CHECK(std::abs(lat - truth["lat_deg"].get<double>()) <= lat_tol);
    }
    not_ok += status != "ok";
  }
  CHECK(not_ok == 3);

  // results.fits: fitsverify (HEASARC's FITS checker, Debian's fitsverify) passes it, and
  // astropy (Debian's python3-astropy, Table.read) reads the same rows, columns and units.
  const auto verified = occulta::test::run_command(std::string(OCCULTA_FITSVERIFY) + " -q -e " +
                                                   shell_quote((dir / "results.fits").string()));
  CHECK_MESSAGE(verified.exit_code == 0, verified.output);
  CHECK(verified.output.find("verification OK") != std::string::npos);
  const auto read = occulta::test::run_python("tests/external/read_table.py", shell_quote((dir / "results.fits").string()));
  REQUIRE_MESSAGE(read.exit_code == 0, read.output);
  const std::vector<json> lines = occulta::test::json_lines(read.output);
  REQUIRE(lines.size() == rows.size() + 1);
  const json& units = lines[0]["units"];
  CHECK(units["shell_lon_deg"] == "deg");
  CHECK(units["shell_speed_km_s"] == "km / s");
  CHECK(units["shell_accel_m_s2"] == "m / s2");
  CHECK(units["shell_apex_height_rs"] == "solRad");
  CHECK(units["boundary_time_sigma_s"] == "s");
  CHECK(units["status"].is_null());
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const json& fits_row = lines[i + 1];
    for (const auto& cell : rows[i]) {
      const std::string name = cell.first, text = cell.second;  // clang 14: no bindings in CAPTURE
      CAPTURE(name);
      CAPTURE(text);
      const json& value = fits_row[name];
      if (value.is_number_float()) {
        CHECK(value.get<double>() == std::stod(text));  // bit for bit: 17 digits both ways
      } else if (value.is_number_integer()) {
        CHECK(value.get<long long>() == std::stoll(text));
      } else if (value.is_null()) {
        CHECK(text.empty());  // a missing value: NaN or TNULL in FITS, "" in the CSV
      } else {
        CHECK(value.get<std::string>() == occulta::imaging::ascii_spelling(text));
      }
    }
  }

  // 2. Two jobs.
  fs::remove_all(dir);
  const auto two = occulta::test::run_command(batch_command(cat + " --out " + out + " --jobs 2 --quiet"));
  CHECK_MESSAGE(occulta::test::slurp(dir / "results.csv") == reference, two.output);

  // 3. Shards 1/2 and 2/2 at the same time on one folder, each killed with SIGKILL once
  // (in Release shard 1 when 3 of its events are done, shard 2 when 9 are; under the
  // sanitizers each after its first) and started again with --resume; then a run without
  // --shard that measures nothing more and writes the table. Moments fixed by progress,
  // not by time, so the test is the same every run.
  fs::remove_all(dir);
  const std::vector<std::string> ids1 = shard_ids(rows, 1, 2), ids2 = shard_ids(rows, 2, 2);
  const bool small = occulta::test::sanitized_build();
  const std::vector<std::string> shard1 = {catalogue.string(), "--out", dir.string(), "--jobs", "1", "--shard", "1/2"};
  std::vector<std::string> shard2 = shard1;
  shard2.back() = "2/2";
  const auto resumed = [](std::vector<std::string> args) {
    args.push_back("--resume");
    return args;
  };
  pid_t first = start_batch(shard1, work / "shard1.log");
  pid_t second = start_batch(shard2, work / "shard2.log");
  const std::size_t kept1 = kill_after(first, dir, ids1, small ? 1 : 3);
  first = start_batch(resumed(shard1), work / "shard1-resumed.log");
  const std::size_t kept2 = kill_after(second, dir, ids2, small ? 1 : 9);
  second = start_batch(resumed(shard2), work / "shard2-resumed.log");
  const int first_exit = wait_exit(first), second_exit = wait_exit(second);
  CHECK(first_exit == 1);  // each shard holds a broken event or more
  CHECK(second_exit == 1);
  // Every event done before its shard's kill is kept by the resumed run, not measured again.
  CHECK(kept1 >= 1);
  CHECK(kept_lines(occulta::test::slurp(work / "shard1-resumed.log")) == kept1);
  CHECK(kept_lines(occulta::test::slurp(work / "shard2-resumed.log")) == kept2);
  const auto merged = occulta::test::run_command(batch_command(cat + " --out " + out + " --resume"));
  CHECK_MESSAGE(merged.output.find("; 0 events measured in this run in ") != std::string::npos, merged.output);
  CHECK_MESSAGE(occulta::test::slurp(dir / "results.csv") == reference, merged.output);

  // 4. mpirun: one coordinator and two workers.
  fs::remove_all(dir);
  const auto mpi = occulta::test::run_command(mpirun_prefix() + shell_quote(occulta::test::occulta_binary().string()) +
                                              " batch " + cat + " --out " + out + " --mpi --quiet");
  CHECK_MESSAGE(occulta::test::slurp(dir / "results.csv") == reference, mpi.output);
}

TEST_CASE("batch: an event past --event-timeout and one whose process is killed fail alone, the others finish") {
  // Two events of the committed sample (2 views × 16 frames of 384², seconds to measure):
  // the test stops one's process with SIGSTOP, as a child hung on a dead network mount
  // would be, and leaves it to the time limit; it kills the other's. Both are found while
  // their first frames are read (the children are the process with --out DIR/<id>).
  const fs::path events = occulta::test::batch_events_dir();
  const fs::path work = occulta::test::scratch_dir("batch_isolation");
  const fs::path sample = occulta::test::source_path("sample_frames/sample-2031-03-14.event.json");
  occulta::test::spit(work / "catalogue.csv",
                      "id,event\nhangs," + sample.string() + "\nkilled," + sample.string() + "\n"
                      "first," + (events / "s02" / "frames" / "s02.event.json").string() + "\n"
                      "second," + (events / "s03" / "frames" / "s03.event.json").string() + "\n");
  const fs::path dir = work / "run";
  // The limit must pass the two good events: a sample-sized measure takes a few seconds in
  // Release but over 30 s under the sanitizers on a loaded machine (seen once), so the
  // sanitized build gives them 150 s.
  const std::string limit_s = occulta::test::sanitized_build() ? "150" : "30";
  const pid_t coordinator = start_batch({(work / "catalogue.csv").string(), "--out", dir.string(), "--jobs", "2",
                                         "--event-timeout", limit_s},
                                        work / "batch.log");
  pid_t hung = -1, child = -1;
  REQUIRE(wait_until([&] { return (hung = process_with_argument((dir / "hangs").string())) > 0; }, 120));
  kill(hung, SIGSTOP);
  REQUIRE(wait_until([&] { return (child = process_with_argument((dir / "killed").string())) > 0; }, 120));
  kill(child, SIGKILL);
  const int exit_code = wait_exit(coordinator);
  INFO(occulta::test::slurp(work / "batch.log"));
  CHECK(exit_code == 1);
  const std::vector<Row> rows = read_table(dir / "results.csv");
  REQUIRE(rows.size() == 4);
  CHECK(rows[0].at("id") == "hangs");
  CHECK(rows[0].at("status") == "failed");
  CHECK(rows[0].at("problems").find("ran longer than the event time limit of " + limit_s + " s (--event-timeout)") !=
        std::string::npos);
  CHECK(rows[1].at("id") == "killed");
  CHECK(rows[1].at("status") == "failed");
  CHECK(rows[1].at("problems").find("was stopped by signal SIGKILL") != std::string::npos);
  for (std::size_t i : {2, 3}) {
    const std::string problems = rows[i].at("problems");
    CAPTURE(problems);
    CHECK(rows[i].at("status") == "ok");
  }
  // The table names the event file each failed child was measuring, in one sentence.
  CHECK(rows[0].at("problems").find("measure of " + sample.string()) != std::string::npos);
}

TEST_CASE("batch: an event whose child cannot be started is a failed row with its sentence, under --jobs and --mpi") {
  // The event's folder cannot be made: a file already holds its name. No frames are read,
  // so the case is cheap; the second row (a glob matching nothing) is measured and fails.
  const fs::path work = occulta::test::scratch_dir("batch_not_started");
  occulta::test::spit(work / "catalogue.csv",
                      "id,start,end,views\n"
                      "blocked,2031-01-01T00:00:00,2031-01-01T06:00:00,a=nowhere/*.fits\n"
                      "empty,2031-01-01T00:00:00,2031-01-01T06:00:00,a=nowhere/*.fits\n");
  const std::string cat = shell_quote((work / "catalogue.csv").string());
  for (const std::string way : {"--jobs 1", "--mpi"}) {
    CAPTURE(way);
    const fs::path dir = work / (way == "--mpi" ? "mpi" : "jobs");
    fs::create_directories(dir);
    occulta::test::spit(dir / "blocked", "a file where the event's folder would go\n");
    const std::string arguments = cat + " --out " + shell_quote(dir.string()) + " " + way;
    const auto run = occulta::test::run_command(way == "--mpi" ? mpirun_prefix(2) + batch_command(arguments)
                                                               : batch_command(arguments));
    INFO(run.output);
    CHECK(run.exit_code == 1);
    const std::vector<Row> rows = read_table(dir / "results.csv");
    REQUIRE(rows.size() == 2);
    CHECK(rows[0].at("id") == "blocked");
    CHECK(rows[0].at("status") == "failed");
    CHECK(rows[0].at("problems").starts_with((dir / "blocked").string() + ": cannot be made ("));  // errno's words follow
    CHECK(run.output.find("occulta: problem: " + (dir / "blocked").string() + ": cannot be made") != std::string::npos);
    CHECK(rows[1].at("status") == "failed");
    CHECK(rows[1].at("problems").find("no files match") != std::string::npos);
  }
}
