// fit/strict_json: the one safe-name rule — what is_safe_name accepts, and the names
// safe_name_from makes from any text (event ids and view names taken from folders and
// headers).
#include <string>

#include <doctest/doctest.h>

#include "fit/strict_json.hpp"

using occulta::fit::is_safe_name;
using occulta::fit::safe_name_from;

TEST_CASE("strict json: safe names made from any text pass the safe-name check") {
  CHECK(safe_name_from("east-1_b.v2", "x") == "east-1_b.v2");  // already safe: unchanged
  CHECK(safe_name_from("STEREO A/COR 2", "x") == "STEREO_A_COR_2");
  CHECK(safe_name_from(".hidden", "x") == "_hidden");
  CHECK(safe_name_from("a..b", "x") == "a._b");
  CHECK(safe_name_from("..", "x") == "_.");
  CHECK(safe_name_from("", "event") == "event");
  CHECK(safe_name_from("é", "x") == "__");  // two UTF-8 bytes, each outside the set
  for (const std::string text : {"a/../b", "../../etc", ".", "x\ny", "tab\there", "...", "a.", "ok"}) {
    CAPTURE(text);
    CHECK(is_safe_name(safe_name_from(text, "event")));
  }
  CHECK_FALSE(is_safe_name("a/b"));
  CHECK_FALSE(is_safe_name(".a"));
  CHECK_FALSE(is_safe_name("a..b"));
}
