// Sample chunks: n records of four IEEE-754 binary64 values, little-endian.
#include <bit>
#include <cstring>

#include "storage/storage.h"

namespace rb::storage {
namespace {

constexpr size_t kRecordBytes = 4 * sizeof(double);

void PutDouble(char* p, double v) {
  std::uint64_t u = std::bit_cast<std::uint64_t>(v);
  if constexpr (std::endian::native == std::endian::big) u = __builtin_bswap64(u);
  std::memcpy(p, &u, sizeof u);
}

double GetDouble(const char* p) {
  std::uint64_t u;
  std::memcpy(&u, p, sizeof u);
  if constexpr (std::endian::native == std::endian::big) u = __builtin_bswap64(u);
  return std::bit_cast<double>(u);
}

}  // namespace

std::string EncodeSampleChunk(std::span<const model::Sample> samples) {
  std::string out(samples.size() * kRecordBytes, '\0');
  char* p = out.data();
  for (const model::Sample& s : samples) {
    PutDouble(p, s.t);
    PutDouble(p + 8, s.speed);
    PutDouble(p + 16, s.current);
    PutDouble(p + 24, s.voltage);
    p += kRecordBytes;
  }
  return out;
}

Status DecodeSampleChunk(std::string_view blob, std::vector<model::Sample>* out) {
  if (blob.size() % kRecordBytes != 0) {
    return Status::Corruption("sample chunk of " + std::to_string(blob.size()) +
                              " bytes; expected a multiple of 32");
  }
  const size_t n = blob.size() / kRecordBytes;
  const char* p = blob.data();
  for (size_t k = 0; k < n; ++k, p += kRecordBytes) {
    out->push_back({GetDouble(p), GetDouble(p + 8), GetDouble(p + 16), GetDouble(p + 24)});
  }
  return Status::Ok();
}

}  // namespace rb::storage
