// occulta — measure coronal mass ejections in coronagraph frames. See README.md.
#include "app/cli.hpp"

int main(int argc, char** argv) { return occulta::app::run(argc, argv); }
