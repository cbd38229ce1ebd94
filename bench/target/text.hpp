// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// A fixed-size text line for the harness output: no printf, no heap, the same on the
/// host and the target.

#include <cstddef>
#include <cstdint>

namespace dqfx_target {

class text_line {
 public:
  text_line& add(const char* s) noexcept {
    while (*s != '\0') put(*s++);
    return *this;
  }
  text_line& add(char c) noexcept {
    put(c);
    return *this;
  }
  text_line& decimal(std::uint64_t v) noexcept {
    char digits[20];
    int n = 0;
    do {
      digits[n++] = static_cast<char>('0' + v % 10);
      v /= 10;
    } while (v != 0);
    while (n > 0) put(digits[--n]);
    return *this;
  }
  /// v >= 0 with one decimal, rounded to nearest (negative values print as 0.0).
  text_line& tenths(double v) noexcept {
    const std::uint64_t t = v > 0 ? static_cast<std::uint64_t>(v * 10.0 + 0.5) : 0;
    return decimal(t / 10).add('.').decimal(t % 10);
  }
  /// v >= 0 rounded to the nearest integer (negative values print as 0).
  text_line& rounded(double v) noexcept {
    return decimal(v > 0 ? static_cast<std::uint64_t>(v + 0.5) : 0);
  }
  text_line& hex(std::uint64_t v, int digits) noexcept {
    for (int i = digits - 1; i >= 0; --i) {
      const unsigned nibble = static_cast<unsigned>(v >> (4 * i)) & 0xFu;
      put(static_cast<char>(nibble < 10 ? '0' + nibble : 'a' + (nibble - 10)));
    }
    return *this;
  }
  const char* c_str() noexcept {
    text_[size_] = '\0';
    return text_;
  }

 private:
  void put(char c) noexcept {
    if (size_ < capacity) text_[size_++] = c;
  }
  static constexpr std::size_t capacity = 159;
  char text_[capacity + 1]{};
  std::size_t size_ = 0;
};

}  // namespace dqfx_target
