// imaging/input_error.hpp — the one exception type for bad input at the edges.
//
// Every problem with a file, a header or an option becomes an InputError whose
// message is one sentence a user can act on, naming the file first:
//   "sample_frames/east/e012.fits: DATE-OBS is "2031-13-04T07:00" — month 13 does not exist."
// Inside the libraries functions take valid inputs and say so in their comments.
#pragma once

#include <stdexcept>
#include <string>

namespace occulta::imaging {

class InputError : public std::runtime_error {
 public:
  // source: the file (or option) at fault; problem: what is wrong, as a sentence
  // without the file name (a final period is added when missing).
  InputError(std::string source, std::string problem)
      : std::runtime_error(compose(source, problem)), source_(std::move(source)), problem_(std::move(problem)) {}

  const std::string& source() const { return source_; }
  const std::string& problem() const { return problem_; }

 private:
  static std::string compose(const std::string& source, const std::string& problem) {
    std::string text = source.empty() ? problem : source + ": " + problem;
    if (!text.empty() && text.back() != '.' && text.back() != '?' && text.back() != '!') text += '.';
    return text;
  }
  std::string source_;
  std::string problem_;
};

}  // namespace occulta::imaging
