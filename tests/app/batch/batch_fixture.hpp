// tests/app/batch/batch_fixture.hpp — the shared events of the catalogue run's suite:
// made once by batch_fixture (a CTest FIXTURES_SETUP), read by every batch test case.
//
// $OCCULTA_TEST_TMP/batch-events/
//   sNN/frames/{a,b}/*.fits, sNN/frames/sNN.truth.json   synthetic CMEs (occulta synth),
//                                                        two views, 96² px, 9 frames each
//   broken/…                                             frames for the 3 broken events
//   catalogue.csv   id,start,end,views,truth — each CME in `windows` windows of 7 frames,
//                   then `truncated` (three frames of one view, one cut short), `missing` (a
//                   folder that does not exist) and `no-observer` (frames without
//                   HGLN_OBS, HGLT_OBS, DSUN_OBS). truth: the truth file, or "".
// The size (batch_catalogue_size): in Release 10 CMEs × 3 windows, 33 rows (the issue's
// ≥ 30 events); under the sanitizers, where every child `measure` is several times slower,
// 4 CMEs × 1 window, 7 rows — the same checks on fewer events.
#pragma once

#include <cstdlib>
#include <filesystem>

#include "tests/support/support.hpp"

namespace occulta::test {

struct BatchCatalogueSize {
  int scenarios, windows;
  int rows() const { return scenarios * windows + 3; }
};

inline BatchCatalogueSize batch_catalogue_size() {
  return sanitized_build() ? BatchCatalogueSize{4, 1} : BatchCatalogueSize{10, 3};
}

inline std::filesystem::path batch_events_dir() {
  const char* root = std::getenv("OCCULTA_TEST_TMP");
  return (root ? std::filesystem::path(root) : std::filesystem::temp_directory_path()) / "batch-events";
}

}  // namespace occulta::test
