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

alignas(8) unsigned char inputs[dqfx_target::samples * dqfx_target::max_record];
alignas(8) unsigned char outputs[dqfx_target::samples * dqfx_target::max_record];

// The baseline must be a working current loop for the comparison to mean anything: its
// duties lie in [0, 1] and reproduce the limited voltage vector (inverse Clarke of the
// switched phase voltages, DC bus = 1, amplitude-invariant).
bool baseline_is_sound(const dqfx_target::textbook_output* out, unsigned n) {
  for (unsigned i = 0; i < n; ++i) {
    const double a = out[i].duty_a, b = out[i].duty_b, c = out[i].duty_c;
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
    for (unsigned i = 0; i < samples; ++i) e.call(inputs + i * e.input_size, outputs + i * e.output_size);
    std::printf("digest %s %s %016llx %s\n", e.kernel, e.type,
                static_cast<unsigned long long>(digest(outputs, samples * e.output_size)),
                e.exact ? "exact" : "informational");
    if (e.kind == role::baseline) {
      textbook_output out[samples];
      std::memcpy(out, outputs, sizeof out);
      if (!baseline_is_sound(out, samples)) {
        std::printf("error: the textbook baseline produced an invalid duty set\n");
        status = 1;
      }
    }
  });
  return status;
}
