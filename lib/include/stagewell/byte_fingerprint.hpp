// A 64-bit fingerprint of a stream of bytes, built as the bytes go by: for noticing that a file's
// first N bytes are no longer the ones read before (a file rewritten, not only grown). Not a
// cryptographic hash: it tells accidental changes apart, not a change made to look the same.
//
// The value depends only on the bytes and their order, not on how they were cut into pieces:
// add("ab"); add("c") gives the same value as add("abc").
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace stagewell {

class ByteFingerprint {
 public:
  void add(std::string_view bytes);
  // The fingerprint of everything added so far (adding may go on afterwards).
  std::uint64_t value() const;
  // value() as 16 lower-case hex digits.
  std::string hex() const;
  std::uint64_t size_bytes() const { return size_bytes_; }

 private:
  void mix_word(std::uint64_t word);

  std::uint64_t state_ = 0x243F6A8885A308D3ull;  // any nonzero start (the fraction of pi)
  std::uint64_t pending_ = 0;                    // bytes of an unfinished 8-byte word, low first
  unsigned pending_bytes_ = 0;
  std::uint64_t size_bytes_ = 0;
};

}  // namespace stagewell
