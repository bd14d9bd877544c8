// PolarFrames (imaging/polar_frames.hpp): frames kept in a temporary file read back as
// the same floats (NaN and all) as frames kept in memory; copies share the file but not
// what is added later; no file is left in the folder; a folder that cannot take the file
// is one sentence naming it.
#include <cmath>
#include <cstring>
#include <limits>

#include <doctest/doctest.h>

#include "imaging/input_error.hpp"
#include "imaging/polar_frames.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using occulta::imaging::PolarFrames;

// A polar-like frame whose every float differs from frame to frame, with NaN (no data) rows.
cv::Mat made_frame(int k, int rows = 7, int cols = 11) {
  cv::Mat f(rows, cols, CV_32FC1);
  for (int r = 0; r < rows; ++r)
    for (int c = 0; c < cols; ++c)
      f.at<float>(r, c) = r == 0 ? std::numeric_limits<float>::quiet_NaN() : float(k) * 1000.0f + float(r) + float(c) / 7.0f;
  return f;
}

// Bit for bit, NaN included (cv::norm would not see NaN against NaN as equal).
bool same_floats(const cv::Mat& a, const cv::Mat& b) {
  if (a.rows != b.rows || a.cols != b.cols || a.type() != b.type()) return false;
  for (int r = 0; r < a.rows; ++r)
    if (std::memcmp(a.ptr(r), b.ptr(r), std::size_t(a.cols) * a.elemSize()) != 0) return false;
  return true;
}

}  // namespace

TEST_CASE("polar frames: frames in a temporary file read back as the frames in memory, and leave no file") {
  const fs::path dir = occulta::test::scratch_dir("polar-frames-file");
  PolarFrames memory;
  PolarFrames file = PolarFrames::in_file(dir);
  CHECK(memory.in_memory());
  CHECK_FALSE(file.in_memory());
  CHECK(fs::is_empty(dir));  // unlinked as soon as made
  for (int k = 0; k < 5; ++k) {
    const cv::Mat f = made_frame(k);
    memory.push_back(f.clone());
    file.push_back(f);
  }
  // A frame that is not continuous (a view into a larger image) is written as its pixels.
  const cv::Mat larger = made_frame(9, 12, 20);
  const cv::Mat inside = larger(cv::Rect(3, 2, 11, 7));
  REQUIRE_FALSE(inside.isContinuous());
  memory.push_back(inside.clone());
  file.push_back(inside);

  REQUIRE(file.size() == 6);
  REQUIRE(memory.size() == 6);
  for (std::size_t k = 0; k < file.size(); ++k) {
    CAPTURE(k);
    CHECK(same_floats(file[k], memory[k]));
  }
  CHECK(same_floats(file.back(), inside));
  CHECK(same_floats(file.front(), made_frame(0)));
  std::size_t seen = 0;
  for (const cv::Mat& f : file) CHECK(same_floats(f, memory[seen++]));
  CHECK(seen == 6);

  // A copy shares the file; what it adds is its own.
  PolarFrames copy = file;
  copy.push_back(made_frame(42));
  CHECK(copy.size() == 7);
  CHECK(file.size() == 6);
  CHECK(same_floats(copy[6], made_frame(42)));
  CHECK(same_floats(copy[2], memory[2]));
  file = PolarFrames{};  // the copy keeps the file open
  CHECK(same_floats(copy[5], inside));
  CHECK(fs::is_empty(dir));
}

TEST_CASE("polar frames: a folder that cannot take the temporary file is named in one sentence") {
  const fs::path dir = occulta::test::scratch_dir("polar-frames-missing");
  const fs::path missing = dir / "no-such-folder";
  try {
    (void)PolarFrames::in_file(missing);
    FAIL("no error for a missing folder");
  } catch (const occulta::imaging::InputError& e) {
    const std::string text = e.what();
    CAPTURE(text);
    CHECK(e.source() == missing.string());
    CHECK(text.find("cannot make the temporary file of the polar running differences") != std::string::npos);
  }
}
