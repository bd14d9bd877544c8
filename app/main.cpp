// occulta — measure coronal mass ejections in coronagraph frames. See README.md.
#include "app/batch_event.hpp"
#include "app/cli.hpp"

int main(int argc, char** argv) {
  occulta::app::follow_batch_parent();  // a catalogue run's child dies with its parent
  return occulta::app::run(argc, argv);
}
