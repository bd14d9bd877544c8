// tests/app/batch/batch_fixture.hpp — the shared events of the catalogue run's suite:
// made once by batch_fixture (a CTest FIXTURES_SETUP), read by every batch test case.
//
// $OCCULTA_TEST_TMP/batch-events/
//   sNN/frames/{a,b}/*.fits, sNN/frames/sNN.truth.json   10 synthetic CMEs (occulta synth),
//                                                        two views, 96² px, 9 frames each
//   broken/…                                             frames for the 3 broken events
//   catalogue.csv   id,start,end,views,truth — 33 rows: each CME in 3 windows of 7 frames
//                   (30 events), then `truncated` (three frames of one view, one cut short), `missing` (a
//                   folder that does not exist) and `no-observer` (frames without
//                   HGLN_OBS, HGLT_OBS, DSUN_OBS). truth: the truth file, or "".
#pragma once

#include <cstdlib>
#include <filesystem>

namespace occulta::test {

inline constexpr int kBatchScenarios = 10, kBatchWindows = 3, kBatchRows = 33;

inline std::filesystem::path batch_events_dir() {
  const char* root = std::getenv("OCCULTA_TEST_TMP");
  return (root ? std::filesystem::path(root) : std::filesystem::temp_directory_path()) / "batch-events";
}

}  // namespace occulta::test
