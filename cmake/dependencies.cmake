# Debian 12 packages (./bootstrap installs them). Each becomes one imported target.
find_package(PkgConfig REQUIRED)
pkg_check_modules(CFITSIO REQUIRED IMPORTED_TARGET cfitsio)
pkg_check_modules(WCSLIB REQUIRED IMPORTED_TARGET wcslib)
find_package(Eigen3 3.4 REQUIRED NO_MODULE)
find_package(Ceres REQUIRED)
find_package(nlohmann_json 3.10 REQUIRED)
find_package(CLI11 REQUIRED)
find_package(doctest REQUIRED)
find_package(Threads REQUIRED)
find_package(OpenSSL REQUIRED)  # SHA-256 of the inputs, for a result's provenance

# OpenCV: Debian's per-module -dev packages ship headers and libraries but the CMake
# config only comes with the full meta-package, so the modules we use are found here.
find_path(OPENCV_INCLUDE_DIR opencv2/core.hpp PATH_SUFFIXES opencv4 REQUIRED)
add_library(occulta_opencv INTERFACE)
target_include_directories(occulta_opencv SYSTEM INTERFACE ${OPENCV_INCLUDE_DIR})
foreach(module core imgproc)
  find_library(OPENCV_${module}_LIBRARY opencv_${module} REQUIRED)
  target_link_libraries(occulta_opencv INTERFACE ${OPENCV_${module}_LIBRARY})
endforeach()
pkg_check_modules(PNG REQUIRED IMPORTED_TARGET libpng)  # viewer/png.hpp
# Tests only: reading PNGs back. The program itself encodes PNGs with libpng
# (viewer/png.hpp): imgcodecs' ~110 dependent libraries cost every process ~0.2 s at start.
find_library(OPENCV_imgcodecs_LIBRARY opencv_imgcodecs REQUIRED)

# The analyst's window (viewer/). Dear ImGui 1.86 (libimgui-dev): the core, the demo and
# every platform/renderer backend in one static libimgui.a (only the objects referenced are
# linked); its TrueType loader calls Debian's libstb, which imgui.pc requires.
pkg_check_modules(IMGUI REQUIRED IMPORTED_TARGET imgui)
find_package(glfw3 3.3 REQUIRED)
# The window's no-OpenGL path puts images with Xlib (viewer/present.cpp).
find_package(X11 REQUIRED)
# The font every picture and the window use: DejaVu Sans from fonts-dejavu-core.
find_file(OCCULTA_FONT_FILE DejaVuSans.ttf PATHS /usr/share/fonts/truetype/dejavu NO_DEFAULT_PATH REQUIRED)
# Tests only: Mesa's off-screen software OpenGL (libosmesa6-dev), the reference renderer
# the rasterizer is compared with. libOSMesa exports the GL entry points itself.
pkg_check_modules(OSMESA REQUIRED IMPORTED_TARGET osmesa)
