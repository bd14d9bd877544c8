// imaging/fits_checksum.cpp — CHECKSUM and DATASUM of the HDU read, verified with
// cfitsio's fits_verify_chksum (FITS Standard 4.0 §4.4.2.7 and its Appendix J, the
// checksum convention), and the policy on a mismatch.
#include <iostream>
#include <mutex>
#include <utility>

#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

std::mutex policy_mutex;
ChecksumPolicy policy = ChecksumPolicy::Refuse;
std::function<void(const std::string&)> warn_sink = [](const std::string& text) {
  std::cerr << "occulta: warning: " << text << '\n';
};

}  // namespace

void set_checksum_policy(ChecksumPolicy new_policy, std::function<void(const std::string&)> warn) {
  const std::lock_guard lock(policy_mutex);
  policy = new_policy;
  if (warn) warn_sink = std::move(warn);
}

namespace fits_detail {

void check_checksums(fitsfile* file, const std::string& source, const std::string& where) {
  int data_ok = 0, hdu_ok = 0, status = 0;
  // 1 = verified, 0 = no such keyword (nothing to check), −1 = mismatch.
  fits_verify_chksum(file, &data_ok, &hdu_ok, &status);
  if (status != 0)
    throw InputError(source, where + " cannot be read to verify its checksums: " + describe_status(status));
  if (data_ok >= 0 && hdu_ok >= 0) return;
  const std::string problem =
      where + (data_ok < 0 ? " has data that do not match its DATASUM" : " has a header or data that do not match its CHECKSUM") +
      " (FITS Standard 4.0 §4.4.2.7): the file was damaged after it was written";
  const std::lock_guard lock(policy_mutex);
  if (policy == ChecksumPolicy::Refuse)
    throw InputError(source, problem + "; --checksum-warn-only reads it anyway");
  warn_sink(InputError(source, problem + "; read anyway (--checksum-warn-only)").what());
}

}  // namespace fits_detail
}  // namespace occulta::imaging
