// SPDX-License-Identifier: MIT
// The Cortex-M harness: times every kernel of kernels.hpp over `samples` inputs and
// prints one line per kernel and type (see report.cmake for the format):
//   kernel <name> <type> <mean> <worst> <repeats> <wrapper address> <output digest> <role>
// Each call goes through an opaque wrapper (flattened: the kernel inlined whole), and the
// same loop around an empty wrapper is subtracted, so a figure is what one call costs,
// including loading its operands and storing its result. A kernel with state runs on from the state its previous call left
// (repeated calls on one input are consecutive periods).
#include <cstdint>
#include <cstring>

#include "board.hpp"
#include "counter.hpp"
#include "kernels.hpp"
#include "text.hpp"

#ifndef DQFX_TARGET_CORE
#define DQFX_TARGET_CORE "cortex-m"
#endif
#ifndef DQFX_TARGET_OPT
#define DQFX_TARGET_OPT "?"
#endif

namespace dqfx_target {
namespace {

alignas(8) unsigned char inputs[samples * record_capacity];
alignas(8) unsigned char outputs[samples * record_capacity];

void print(text_line& line) noexcept { board_write(line.add('\n').c_str()); }

DQFX_TARGET_OPAQUE void empty_call(void*, void*) {}

/// 1000 NOPs: the calibration block (an instruction count known by construction).
DQFX_TARGET_OPAQUE void nop_block(void*, void*) {
  asm volatile(".rept 1000\n\tnop\n\t.endr");
}
constexpr unsigned nops_per_block = 1000;

/// Counts for `repeats` calls of f on one input.
DQFX_TARGET_OPAQUE std::uint32_t time_repeated(call_function f, void* in, void* out,
                                                unsigned repeats) {
  const std::uint32_t start = counter_read();
  for (unsigned r = repeats; r != 0; --r) f(in, out);
  return counter_elapsed(start, counter_read());
}

/// Counts for one call of f on each of the inputs.
DQFX_TARGET_OPAQUE std::uint32_t time_pass(call_function f, const entry& e) {
  const std::uint32_t start = counter_read();
  for (unsigned i = 0; i < samples; ++i) f(inputs + i * e.input_size, outputs + i * e.output_size);
  return counter_elapsed(start, counter_read());
}

/// Units (instructions or cycles) per count; 0 if the counter does not advance (for
/// example the DWT cycle counter under QEMU, which does not model it).
double calibrate() noexcept {
  constexpr unsigned repeats = 64;
  const double block = time_repeated(nop_block, nullptr, nullptr, repeats);
  const double empty = time_repeated(empty_call, nullptr, nullptr, repeats);
  if (block - empty < 1.0) return 0.0;
  if (!counter_needs_calibration) return 1.0;
  const double per_count = nops_per_block * repeats / (block - empty);
  // The icount clock advances a whole number of instructions per tick: take the nearest
  // whole number when the measurement is within 0.1 % of it.
  const double whole = static_cast<double>(static_cast<std::uint32_t>(per_count + 0.5));
  return (per_count - whole) * (per_count - whole) < 1e-6 * whole * whole ? whole : per_count;
}

/// Repeats per input so that one measurement spans about `budget` units: enough counts
/// for the quantisation of one count to stay small, few enough to keep the run short.
unsigned repeats_for(double units_per_call) noexcept {
  constexpr double budget = 32000;
  constexpr unsigned most = 256;
  if (units_per_call < budget / most) return most;
  const unsigned r = static_cast<unsigned>(budget / units_per_call);
  return r < 1 ? 1 : r;
}

/// Digest of the outputs of two calls per input (the second call sees the state the
/// first one left), from fresh inputs: what the host prints for the same kernel.
std::uint64_t output_digest(const entry& e) noexcept {
  e.fill(inputs);
  std::memset(outputs, 0, sizeof outputs);
  for (unsigned i = 0; i < samples; ++i) {
    for (int twice = 0; twice < 2; ++twice) e.call(inputs + i * e.input_size, outputs + i * e.output_size);
  }
  return digest(outputs, samples * e.output_size);
}

void measure(const entry& e, double per_count) noexcept {
  e.fill(inputs);

  const double rough = (static_cast<double>(time_pass(e.call, e)) -
                        static_cast<double>(time_pass(empty_call, e))) *
                       per_count / samples;
  const unsigned repeats = repeats_for(rough);

  std::uint64_t total = 0, total_empty = 0;
  std::uint32_t most = 0;
  for (unsigned i = 0; i < samples; ++i) {
    unsigned char* in = inputs + i * e.input_size;
    unsigned char* out = outputs + i * e.output_size;
    const std::uint32_t counts = time_repeated(e.call, in, out, repeats);
    total_empty += time_repeated(empty_call, in, out, repeats);
    total += counts;
    if (counts > most) most = counts;
  }
  // The empty loop's average is exact enough (its phase against the counter varies), so
  // both figures subtract it.
  const double empty = static_cast<double>(total_empty) / samples;
  const double scale = per_count / repeats;
  const double mean = (static_cast<double>(total) / samples - empty) * scale;
  const double worst = (static_cast<double>(most) - empty) * scale;

  text_line line;
  line.add("kernel ").add(e.kernel).add(' ').add(e.type).add(' ').tenths(mean).add(' ');
  line.rounded(worst).add(' ').decimal(repeats).add(" 0x");
  line.hex(reinterpret_cast<std::uintptr_t>(e.call), 8).add(' ');
  line.hex(output_digest(e), 16).add(' ');
  line.add(role_names[static_cast<int>(e.kind)]);
  print(line);
}

}  // namespace
}  // namespace dqfx_target

int main() {
  using namespace dqfx_target;
  counter_start();
  const double per_count = calibrate();
  {
    text_line line;
    print(line.add("harness " DQFX_TARGET_CORE " -" DQFX_TARGET_OPT));
  }
  {
    text_line line;
    print(line.add("counter ").add(counter_name));
  }
  {
    text_line line;
    print(line.add("unit ").add(counter_unit).add(' ').tenths(per_count).add(" per count"));
  }
  if (per_count <= 0.0) {
    text_line line;
    print(line.add("error: the counter does not advance"));
    return 2;
  }
  for_each_entry([per_count](const entry& e) { measure(e, per_count); });
  text_line line;
  print(line.add("done"));
  return 0;
}
