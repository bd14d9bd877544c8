// Benchmark: `occulta batch` (issue 17). On copies of the committed sample event (2 views
// × 16 frames of 384², measured as `measure` measures it):
//   events per minute with --jobs 2 (the default on this 2-core machine);
//   the overhead of --jobs 1 over the sum of each event's own `occulta measure` process
//   time (budget ≤ 5 %);
//   the speed-up of --jobs 2 over --jobs 1 (budget ≥ 1.8×);
// and the coordinator's own peak memory (getrusage RUSAGE_SELF, printed by the run) for
// catalogues of 30 and 120 rows of events that fail at once (globs matching nothing):
// flat in the number of rows. Wall times on a shared machine: the load is printed beside.
// --short: 2 events and 10 / 40 rows, for the test suite.
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>

namespace {
namespace fs = std::filesystem;

double run_s(const std::string& command) {
  const auto start = std::chrono::steady_clock::now();
  if (std::system(command.c_str()) == -1) std::perror("system");
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

std::string read_file(const fs::path& path) {
  std::ifstream in(path);
  return std::string((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
}

// The coordinator's peak memory, from the run's summary line ("coordinator peak memory N KB").
long peak_kb(const fs::path& log) {
  const std::string text = read_file(log);
  const std::size_t at = text.find("coordinator peak memory ");
  return at == std::string::npos ? -1 : std::atol(text.c_str() + at + std::strlen("coordinator peak memory "));
}

double load_average() {
  double load = -1;
  if (FILE* f = std::fopen("/proc/loadavg", "r")) {
    if (std::fscanf(f, "%lf", &load) != 1) load = -1;
    std::fclose(f);
  }
  return load;
}

}  // namespace

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int events = short_mode ? 2 : 8;
  const fs::path work = fs::temp_directory_path() / "occulta-batch-bench";
  fs::remove_all(work);
  fs::create_directories(work);
  const std::string bin = OCCULTA_EXECUTABLE;
  const std::string sample = std::string(OCCULTA_BENCH_SOURCE_DIR) + "/sample_frames/sample-2031-03-14.event.json";
  {
    std::ofstream catalogue(work / "sample.csv");
    catalogue << "id,event\n";
    for (int i = 0; i < events; ++i) catalogue << "e" << i << "," << sample << "\n";
  }
  double solo_s = 0;
  for (int i = 0; i < events; ++i)
    solo_s += run_s(bin + " measure " + sample + " --out " + (work / "solo").string() + " --quiet 2>/dev/null");
  const double load_before = load_average();
  const double one_s = run_s(bin + " batch " + (work / "sample.csv").string() + " --out " + (work / "one").string() +
                             " --jobs 1 --quiet");
  const double two_s = run_s(bin + " batch " + (work / "sample.csv").string() + " --out " + (work / "two").string() +
                             " --jobs 2 --quiet");
  std::printf("batch bench: %d copies of the sample event (2 views x 16 frames of 384x384), load average %.1f\n",
              events, load_before);
  std::printf("  sum of %d measure processes  %7.2f s\n", events, solo_s);
  std::printf("  batch --jobs 1               %7.2f s    overhead %+.1f %% (budget <= 5 %%)\n", one_s,
              100.0 * (one_s / solo_s - 1.0));
  std::printf("  batch --jobs 2               %7.2f s    speed-up %.2f x (budget >= 1.8 x)\n", two_s, one_s / two_s);
  std::printf("  events per minute, --jobs 2  %7.1f\n", 60.0 * events / two_s);

  long kb[2] = {0, 0};
  const int rows[2] = {short_mode ? 10 : 30, short_mode ? 40 : 120};
  for (int k = 0; k < 2; ++k) {
    const fs::path catalogue = work / ("rows" + std::to_string(rows[k]) + ".csv");
    std::ofstream out(catalogue);
    out << "id,start,end,views\n";
    for (int i = 0; i < rows[k]; ++i) out << "r" << i << ",2031-01-01T00:00:00,2031-01-01T06:00:00,a=nowhere/*.fits\n";
    out.close();
    const fs::path log = work / ("rows" + std::to_string(rows[k]) + ".log");
    run_s(bin + " batch " + catalogue.string() + " --out " + (work / ("rows" + std::to_string(rows[k]))).string() +
          " --jobs 2 > " + log.string() + " 2>&1");
    kb[k] = peak_kb(log);
  }
  std::printf("  coordinator peak memory      %ld KB at %d rows, %ld KB at %d rows (%+ld KB)\n", kb[0], rows[0], kb[1],
              rows[1], kb[1] - kb[0]);
  fs::remove_all(work);
  return kb[0] > 0 && kb[1] > 0 ? 0 : 1;
}
