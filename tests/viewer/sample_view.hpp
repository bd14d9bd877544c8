// tests/viewer/sample_view.hpp — one view of the committed sample event as the window's
// loader takes it (viewer/pictures.hpp ViewSource), for the viewer tests.
#pragma once

#include <filesystem>
#include <string>

#include "tests/support/support.hpp"
#include "viewer/pictures.hpp"

namespace occulta::test {

// sample_frames/<name>/*.fits, with the occulter and field stop the sample's event file gives.
inline viewer::ViewSource sample_view(const std::string& name) {
  viewer::ViewSource source;
  source.name = name;
  for (const auto& entry : std::filesystem::directory_iterator(source_path("sample_frames") / name))
    if (entry.path().extension() == ".fits") source.files.push_back(entry.path());
  source.options.occulter_rs = std::make_pair(2.5, 14.5);  // as the sample's event file says
  return source;
}

}  // namespace occulta::test
