// Eight bytes at a time, so that fingerprinting what a file source reads costs little beside
// parsing it. Each word goes through a bijection of the state (an odd multiply, a xor, a rotation,
// an odd multiply): two inputs of one length that differ in a single word always differ. The
// length is mixed in last, so that trailing zero bytes count.
#include "stagewell/byte_fingerprint.hpp"

#include <fmt/format.h>

#include <bit>
#include <cstring>

namespace stagewell {
namespace {

constexpr std::uint64_t kWordFactor = 0x9E3779B97F4A7C15ull;   // odd: the multiply is a bijection
constexpr std::uint64_t kStateFactor = 0xBF58476D1CE4E5B9ull;  // odd
constexpr unsigned kWordBytes = 8;

// The same word from the same bytes on any machine: the first byte is the lowest.
std::uint64_t little_endian_word(const char* bytes) {
  std::uint64_t word;
  std::memcpy(&word, bytes, sizeof word);
  if constexpr (std::endian::native == std::endian::big) word = std::byteswap(word);
  return word;
}

// MurmurHash3's 64-bit finaliser: spreads every bit of the state over the value.
std::uint64_t finish(std::uint64_t h) {
  h ^= h >> 33;
  h *= 0xFF51AFD7ED558CCDull;
  h ^= h >> 33;
  h *= 0xC4CEB9FE1A85EC53ull;
  h ^= h >> 33;
  return h;
}

}  // namespace

void ByteFingerprint::mix_word(std::uint64_t word) {
  state_ = std::rotl(state_ ^ (word * kWordFactor), 29) * kStateFactor;
}

void ByteFingerprint::add(std::string_view bytes) {
  size_bytes_ += bytes.size();
  const char* at = bytes.data();
  std::size_t left = bytes.size();
  // Complete the pending word first.
  while (pending_bytes_ > 0 && left > 0) {
    pending_ |= static_cast<std::uint64_t>(static_cast<unsigned char>(*at)) << (8 * pending_bytes_);
    ++at;
    --left;
    if (++pending_bytes_ == kWordBytes) {
      mix_word(pending_);
      pending_ = 0;
      pending_bytes_ = 0;
    }
  }
  for (; left >= kWordBytes; at += kWordBytes, left -= kWordBytes) {
    mix_word(little_endian_word(at));
  }
  for (; left > 0; ++at, --left) {
    pending_ |= static_cast<std::uint64_t>(static_cast<unsigned char>(*at)) << (8 * pending_bytes_);
    ++pending_bytes_;
  }
}

std::uint64_t ByteFingerprint::value() const {
  ByteFingerprint end = *this;
  if (end.pending_bytes_ > 0) end.mix_word(end.pending_);
  end.mix_word(size_bytes_);
  return finish(end.state_);
}

std::string ByteFingerprint::hex() const { return fmt::format("{:016x}", value()); }

}  // namespace stagewell
