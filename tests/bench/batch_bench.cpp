// Benchmark: `occulta batch` (issue 17). On copies of the committed sample event (2 views
// × 16 frames of 384², measured as `measure` measures it):
//   events per minute with --jobs 2 (the default on this 2-core machine);
//   the overhead of --jobs 1 over the sum of each event's own `occulta measure` process
//   time (budget ≤ 5 %);
//   the speed-up of --jobs 2 over --jobs 1 (budget ≥ 1.8×);
// and the coordinator's own peak memory (getrusage RUSAGE_SELF, printed by the run) for
// catalogues of 30 and 120 rows of events that fail at once (globs matching nothing):
// flat in the number of rows. Wall times on a shared machine depend on its load (printed
// beside); the overhead is also given in CPU time (user + system of the whole process tree,
// getrusage RUSAGE_CHILDREN), which others' work does not change. Each figure is the best
// of `rounds` rounds, the runs of a round one after another.
// --short: 2 events and 10 / 40 rows, for the test suite.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>

#include <sys/resource.h>

namespace {
namespace fs = std::filesystem;

struct Cost {
  double wall_s = 0, cpu_s = 0;
};

double children_cpu_s() {
  rusage r{};
  getrusage(RUSAGE_CHILDREN, &r);
  return static_cast<double>(r.ru_utime.tv_sec + r.ru_stime.tv_sec) +
         1e-6 * static_cast<double>(r.ru_utime.tv_usec + r.ru_stime.tv_usec);
}

// A command's wall time and the CPU time of its whole process tree (all waited for).
Cost run(const std::string& command) {
  const double cpu0 = children_cpu_s();
  const auto start = std::chrono::steady_clock::now();
  if (std::system(command.c_str()) == -1) std::perror("system");
  return {std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count(), children_cpu_s() - cpu0};
}

Cost best(const Cost& a, const Cost& b) { return {std::min(a.wall_s, b.wall_s), std::min(a.cpu_s, b.cpu_s)}; }

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
  const int rounds = short_mode ? 1 : 3;
  Cost solo{1e30, 1e30}, one{1e30, 1e30}, two{1e30, 1e30};
  const double load_before = load_average();
  for (int round = 0; round < rounds; ++round) {
    Cost sum;
    for (int i = 0; i < events; ++i) {
      const Cost c = run(bin + " measure " + sample + " --out " + (work / "solo").string() + " --quiet 2>/dev/null");
      sum.wall_s += c.wall_s;
      sum.cpu_s += c.cpu_s;
    }
    solo = best(solo, sum);
    fs::remove_all(work / "one");
    fs::remove_all(work / "two");
    one = best(one, run(bin + " batch " + (work / "sample.csv").string() + " --out " + (work / "one").string() +
                        " --jobs 1 --quiet"));
    two = best(two, run(bin + " batch " + (work / "sample.csv").string() + " --out " + (work / "two").string() +
                        " --jobs 2 --quiet"));
  }
  std::printf("batch bench: %d copies of the sample event (2 views x 16 frames of 384x384), best of %d, "
              "load average %.1f before, %.1f after\n",
              events, rounds, load_before, load_average());
  std::printf("  sum of %d measure processes  %7.2f s wall  %7.2f s CPU\n", events, solo.wall_s, solo.cpu_s);
  std::printf("  batch --jobs 1               %7.2f s wall  %7.2f s CPU   overhead %+.1f %% wall, %+.1f %% CPU "
              "(budget <= 5 %%)\n",
              one.wall_s, one.cpu_s, 100.0 * (one.wall_s / solo.wall_s - 1.0), 100.0 * (one.cpu_s / solo.cpu_s - 1.0));
  std::printf("  batch --jobs 2               %7.2f s wall  %7.2f s CPU   speed-up %.2f x (budget >= 1.8 x)\n",
              two.wall_s, two.cpu_s, one.wall_s / two.wall_s);
  std::printf("  events per minute, --jobs 2  %7.1f\n", 60.0 * events / two.wall_s);

  long kb[2] = {0, 0};
  const int rows[2] = {short_mode ? 10 : 30, short_mode ? 40 : 120};
  for (int k = 0; k < 2; ++k) {
    const fs::path catalogue = work / ("rows" + std::to_string(rows[k]) + ".csv");
    std::ofstream out(catalogue);
    out << "id,start,end,views\n";
    for (int i = 0; i < rows[k]; ++i) out << "r" << i << ",2031-01-01T00:00:00,2031-01-01T06:00:00,a=nowhere/*.fits\n";
    out.close();
    const fs::path log = work / ("rows" + std::to_string(rows[k]) + ".log");
    run(bin + " batch " + catalogue.string() + " --out " + (work / ("rows" + std::to_string(rows[k]))).string() +
          " --jobs 2 > " + log.string() + " 2>&1");
    kb[k] = peak_kb(log);
  }
  std::printf("  coordinator peak memory      %ld KB at %d rows, %ld KB at %d rows (%+ld KB)\n", kb[0], rows[0], kb[1],
              rows[1], kb[1] - kb[0]);
  fs::remove_all(work);
  return kb[0] > 0 && kb[1] > 0 ? 0 : 1;
}
