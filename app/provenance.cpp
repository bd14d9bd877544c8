#include "app/provenance.hpp"

#include <array>
#include <fstream>
#include <memory>

#include <openssl/evp.h>

#include "imaging/input_error.hpp"

namespace occulta::app {

std::string sha256_file(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw imaging::InputError(path.string(), "cannot be opened to take its SHA-256");
  const std::unique_ptr<EVP_MD_CTX, decltype(&EVP_MD_CTX_free)> context(EVP_MD_CTX_new(), EVP_MD_CTX_free);
  EVP_DigestInit_ex(context.get(), EVP_sha256(), nullptr);
  std::array<char, 1 << 16> buffer{};
  while (in) {
    in.read(buffer.data(), buffer.size());
    EVP_DigestUpdate(context.get(), buffer.data(), static_cast<size_t>(in.gcount()));
  }
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  EVP_DigestFinal_ex(context.get(), digest.data(), &length);
  static const char* hex = "0123456789abcdef";
  std::string text;
  for (unsigned int i = 0; i < length; ++i) {
    text += hex[digest[i] >> 4];
    text += hex[digest[i] & 15];
  }
  return text;
}

KnownSha256 sha256_files(const std::vector<std::filesystem::path>& files) {
  KnownSha256 known;
  for (const auto& path : files) {
    try {
      known.emplace(path, sha256_file(path));
    } catch (const imaging::InputError&) {
      // Left out: provenance() reads it again and names it.
    }
  }
  return known;
}

nlohmann::json provenance(const std::vector<std::filesystem::path>& inputs, const nlohmann::json& options,
                          double elapsed_s, const KnownSha256& known) {
  nlohmann::json files = nlohmann::json::array();
  for (const auto& path : inputs) {
    const auto found = known.find(path);
    files.push_back({{"path", path.generic_string()}, {"sha256", found != known.end() ? found->second : sha256_file(path)}});
  }
  return {{"version", OCCULTA_VERSION}, {"inputs", files}, {"options", options}, {"elapsed_s", elapsed_s}};
}

}  // namespace occulta::app
