// Quality flags attached to a reading or a hydraulic state. The names are part of the public
// contract (JSON output, the `discharge` view): never rename one.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace stagewell {

enum class Flag : std::uint32_t {
  below_zero_flow = 1u << 0,  // depth <= 0: discharge 0
  above_section = 1u << 1,    // deeper than the top of the section
  surcharged = 1u << 2,       // circular section above its crown: open-channel formulas do not hold
  supercritical = 1u << 3,    // Froude number above 1
  out_of_range = 1u << 4,     // outside the sensor's plausible range: no discharge
  spike = 1u << 5,            // a jump that comes back within a few readings
  unsteady = 1u << 6,         // stage changes faster than max_rate
  flatline = 1u << 7,         // the same value for too long
  gap = 1u << 8,              // too long since the previous reading
  late = 1u << 9,             // arrived out of time order
  future = 1u << 10,          // ahead of the clock by more than max_clock_skew
};

// A set of flags.
class Flags {
 public:
  constexpr Flags() = default;
  constexpr explicit Flags(std::uint32_t bits) : bits_(bits) {}
  constexpr Flags(Flag flag) : bits_(static_cast<std::uint32_t>(flag)) {}  // NOLINT: implicit
  constexpr bool has(Flag flag) const { return (bits_ & static_cast<std::uint32_t>(flag)) != 0; }
  constexpr void set(Flag flag) { bits_ |= static_cast<std::uint32_t>(flag); }
  constexpr void clear(Flag flag) { bits_ &= ~static_cast<std::uint32_t>(flag); }
  constexpr Flags& operator|=(Flags other) {
    bits_ |= other.bits_;
    return *this;
  }
  constexpr bool empty() const { return bits_ == 0; }
  constexpr std::uint32_t bits() const { return bits_; }
  friend constexpr bool operator==(Flags, Flags) = default;

  std::vector<std::string_view> names() const;     // in declaration order
  std::string joined(char separator = ',') const;  // "" when empty

 private:
  std::uint32_t bits_ = 0;
};

std::string_view name(Flag flag);
std::optional<Flag> parse_flag(std::string_view name);
const std::vector<Flag>& all_flags();

}  // namespace stagewell
