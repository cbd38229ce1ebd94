// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): the outcome of a parameter check or a run. No
/// exceptions: a function that can refuse returns a `status` whose message says why.

#include <cstdio>
#include <string>

namespace dqfx::sim {

/// Success, or a failure with a message for a person to read.
class status {
 public:
  status() = default;  ///< success
  static status failure(std::string message) {
    status s;
    s.message_ = message.empty() ? std::string{"failed"} : std::move(message);
    return s;
  }
  bool ok() const noexcept { return message_.empty(); }
  explicit operator bool() const noexcept { return ok(); }
  /// Empty on success.
  const std::string& message() const noexcept { return message_; }
  /// The first failure of the two (for chains of checks).
  status& also(const status& next) {
    if (ok() && !next.ok()) message_ = next.message_;
    return *this;
  }

 private:
  std::string message_;
};

/// A number for a message: up to 6 significant digits ("1.5e-05", "250").
inline std::string text(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.6g", v);
  return buffer;
}

}  // namespace dqfx::sim
