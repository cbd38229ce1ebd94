// SPDX-License-Identifier: MIT
// The host half of the golden-vector test: runs every kernel of kernels.hpp on the same
// inputs as the Cortex-M harness and prints the digest of its outputs, one line each:
//   digest <name> <type> <output digest> exact|informational
// compare_golden.cmake checks that the target printed the same digest for every exact
// (integer) entry. It also checks the textbook baseline against its own definition.
#include <cmath>
#include <cstdio>
#include <cstring>
#include <initializer_list>

#include "kernels.hpp"

namespace {

alignas(8) unsigned char inputs[dqfx_target::samples * dqfx_target::record_capacity];
alignas(8) unsigned char outputs[dqfx_target::samples * dqfx_target::record_capacity];

// The baseline must be a working current loop for the comparison to mean anything: its
// duties lie in [0, 1] and reproduce the limited voltage vector (inverse Clarke of the
// switched phase voltages, DC bus = 1, amplitude-invariant).
bool baseline_is_sound(const dqfx_target::textbook_duties* out, unsigned n) {
  for (unsigned i = 0; i < n; ++i) {
    const double a = out[i].a, b = out[i].b, c = out[i].c;
    for (double d : {a, b, c}) {
      if (!(d >= -1e-6 && d <= 1.0 + 1e-6)) return false;
    }
    const double v_alpha = (2.0 * a - b - c) / 3.0;
    const double v_beta = (b - c) / std::sqrt(3.0);
    if (std::hypot(v_alpha, v_beta) > 1.0 / std::sqrt(3.0) + 1e-5) return false;
  }
  return true;
}

}  // namespace

int main() {
  using namespace dqfx_target;
  int status = 0;
  for_each_entry([&status](const entry& e) {
    e.fill(inputs);
    std::memset(outputs, 0, sizeof outputs);
    // Two calls per input, as on the target: the second sees the state the first left.
    for (unsigned i = 0; i < samples; ++i) {
      for (int twice = 0; twice < 2; ++twice) e.call(inputs + i * e.input_size, outputs + i * e.output_size);
    }
    std::printf("digest %s %s %016llx %s\n", e.kernel, e.type,
                static_cast<unsigned long long>(digest(outputs, samples * e.output_size)),
                e.exact ? "exact" : "informational");
    if (e.kind == role::baseline) {
      textbook_duties out[samples];
      std::memcpy(out, outputs, sizeof out);
      if (!baseline_is_sound(out, samples)) {
        std::printf("error: the textbook baseline produced an invalid duty set\n");
        status = 1;
      }
    }
  });
  return status;
}
