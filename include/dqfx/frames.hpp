// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The three reference frames of field-oriented control, and a sine/cosine pair.

#include "dqfx/detail/language.hpp"

namespace dqfx {

/// Three phase quantities (currents, voltages or duties).
template <class T> struct phases {
  T a{}, b{}, c{};
};

/// Stator-fixed two-axis frame: alpha along phase a, beta 90 degrees ahead.
template <class T> struct stationary {
  T alpha{}, beta{};
};

/// Rotor-fixed frame: d along the rotor flux, q 90 degrees ahead.
template <class T> struct rotating {
  T d{}, q{};
};

/// Sine and cosine of one angle, computed once and shared by Park and inverse Park.
template <class T> struct sincos {
  T sin{}, cos{};
};

}  // namespace dqfx
