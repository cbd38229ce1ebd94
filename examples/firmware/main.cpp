// SPDX-License-Identifier: MIT
// The application: start the period interrupt, command a speed, and (under QEMU) run the
// motor model between interrupts. The test scenario: ADC offset calibration at
// standstill, a speed step to 3000 rpm, then a load torque step; the speed must settle
// before the load step and again after it, with no trip. The summary goes to the console
// and the exit status says whether the run passed.
#include <cstdint>

#include "board.hpp"
#include "control.hpp"
#include "motor_model.hpp"

namespace {

using drive::number;

constexpr std::uint32_t periods_per_ms = 20;
constexpr std::uint32_t speed_step_at = 20 * periods_per_ms;
constexpr std::uint32_t load_step_at = 200 * periods_per_ms;
constexpr std::uint32_t end_at = 350 * periods_per_ms;
// Settled: within 1% of the command over the 50 ms before the load step and before the end.
constexpr std::uint32_t window = 50 * periods_per_ms;
constexpr auto command_rpm = static_cast<std::int32_t>(drive::speed_rpm);

constexpr number speed_command = dqfx::per_unit_constant<number>(
    [] { return drive::base.speed(drive::speed_rpm / 60 * 2 * drive::pi * drive::pole_pairs); });
constexpr std::int32_t rpm_at_base = static_cast<std::int32_t>(drive::base.mechanical_speed() * 60 / (2 * drive::pi) + 0.5);
constexpr std::int32_t load = static_cast<std::int32_t>(drive::load_torque / drive::base.torque() * 2147483648.0 + 0.5);

// Per-unit values to integers for printing (no float formatting on the console).
std::int32_t scaled(std::int64_t raw, int fraction_bits, std::int32_t unit) noexcept {
  return static_cast<std::int32_t>(raw * unit / (std::int64_t{1} << fraction_bits));
}
std::int32_t rpm(number speed) noexcept { return scaled(speed.raw(), number::fraction_bits, rpm_at_base); }

motor_model model;

}  // namespace

int main() {
  model.start(board::peripherals);
  board::start_period_interrupt();
  std::int32_t worst[2] = {0, 0};  // largest |speed error| in rpm in the two windows
  bool overrun = false;
  control::status s{};
  for (std::uint32_t period = 1; period <= end_at; ++period) {
    overrun = !board::wait_for_period() || overrun;
    s = control::read_status();
    if (period == speed_step_at) control::set_speed(speed_command);
    if (period == load_step_at) model.set_load(load);
    model.advance(board::peripherals);
    const bool before_load = period > load_step_at - window && period <= load_step_at;
    if (before_load || period > end_at - window) {
      std::int32_t error = rpm(s.speed) - command_rpm;
      error = error < 0 ? -error : error;
      std::int32_t& w = worst[before_load ? 0 : 1];
      w = error > w ? error : w;
    }
  }
  board::stop_period_interrupt();

  const std::int32_t tolerance = command_rpm / 100;
  const bool settled = s.running && worst[0] <= tolerance && worst[1] <= tolerance;
  const bool passed = settled && s.trips == 0 && !overrun;
  board::write("firmware " FIRMWARE_CORE " ");
  board::write(dqfx::number_traits<number>::name);
  board::write("\nperiods ");
  board::write(static_cast<std::int32_t>(end_at));
  board::write("\nspeed command rpm ");
  board::write(command_rpm);
  board::write("\nspeed measured rpm ");
  board::write(rpm(s.speed));
  board::write("\nspeed model rpm ");
  board::write(scaled(model.speed(), 31, rpm_at_base));
  board::write("\nlargest speed error rpm before load ");
  board::write(worst[0]);
  board::write(" after load ");
  board::write(worst[1]);
  board::write("\niq mA ");
  board::write(scaled(s.iq.raw(), number::fraction_bits, static_cast<std::int32_t>(drive::base.base_current * 1000)));
  board::write("\ntrips ");
  board::write(s.trips);
  board::write("\noverruns ");
  board::write(overrun ? 1 : 0);
  board::write("\ninterrupt instructions mean ");
  board::write(static_cast<std::int32_t>(board::handler_instructions_mean()));
  board::write(" max ");
  board::write(static_cast<std::int32_t>(board::handler_instructions_max()));
  board::write(passed ? "\nresult: speed settled, no fault\n" : "\nresult: FAILED\n");
  return passed ? 0 : 1;
}
