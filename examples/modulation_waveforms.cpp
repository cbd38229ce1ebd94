// SPDX-License-Identifier: MIT
// The duty waveforms of each modulation scheme over one electrical turn, for a command
// of 0.5 of the bus voltage (inside every scheme's linear range), computed in q15. Writes
// modulation_waveforms.csv and, when gnuplot is installed, modulation_waveforms.png into
// the directory given as the first argument (default: the current directory).
//
//   dqfx_modulation_waveforms examples/images   # regenerates the picture used in docs/

#include <cmath>
#include <cstdio>
#include <string>

#include "dqfx/svm.hpp"

namespace {

using T = dqfx::q15;
constexpr int steps = 720;  // half a degree
constexpr double magnitude = 0.5;

struct scheme_duties {
  dqfx::phases<T> sinusoidal, centred, clamp_low, clamp_high, clamp_peak;
};

scheme_duties at(double degrees) {
  const double t = degrees * 3.14159265358979323846 / 180.0;
  const dqfx::stationary<T> v{dqfx::from_double<T>(magnitude * std::cos(t)), dqfx::from_double<T>(magnitude * std::sin(t))};
  namespace mod = dqfx::modulation;
  return {dqfx::svm<mod::sinusoidal>(v).duty, dqfx::svm<mod::centred>(v).duty, dqfx::svm<mod::clamp_low>(v).duty,
          dqfx::svm<mod::clamp_high>(v).duty, dqfx::svm<mod::clamp_peak>(v).duty};
}

void print(std::FILE* f, const dqfx::phases<T>& d) {
  std::fprintf(f, ",%.6f,%.6f,%.6f", dqfx::to_double(d.a), dqfx::to_double(d.b), dqfx::to_double(d.c));
}

bool write_csv(const std::string& path) {
  std::FILE* f = std::fopen(path.c_str(), "w");
  if (!f) return false;
  std::fprintf(f, "degrees");
  for (const char* s : {"sinusoidal", "centred", "clamp_low", "clamp_high", "clamp_peak"})
    std::fprintf(f, ",%s_a,%s_b,%s_c", s, s, s);
  std::fprintf(f, ",line_ab\n");
  for (int k = 0; k <= steps; ++k) {
    const double degrees = 360.0 * k / steps;
    const scheme_duties d = at(degrees);
    std::fprintf(f, "%.2f", degrees);
    print(f, d.sinusoidal);
    print(f, d.centred);
    print(f, d.clamp_low);
    print(f, d.clamp_high);
    print(f, d.clamp_peak);
    // The line-to-line voltage a-b relative to the bus: the same for every scheme.
    std::fprintf(f, ",%.6f\n", dqfx::to_double(d.centred.a) - dqfx::to_double(d.centred.b));
  }
  return std::fclose(f) == 0;
}

bool plot(const std::string& csv, const std::string& png) {
  std::FILE* g = popen("gnuplot 2>/dev/null", "w");
  if (!g) return false;
  std::fprintf(g,
               "set terminal pngcairo size 900,1150 font 'sans,10'\n"
               "set output '%s'\n"
               "set datafile separator ','\n"
               "set multiplot layout 5,1 title 'Duties over one electrical turn, command 0.5 of the bus (dqfx::svm, q15)'\n"
               "set xrange [0:360]\nset xtics 60\nset yrange [-0.05:1.05]\nset ytics 0.25\nset grid\n"
               "set key outside right\nset lmargin 8\nset rmargin 16\n",
               png.c_str());
  const char* titles[5] = {"sinusoidal (no zero sequence)", "centred (min-max injection)",
                           "clamp_low (DPWMMIN)", "clamp_high (DPWMMAX)", "clamp_peak (DPWM1)"};
  for (int s = 0; s < 5; ++s) {
    const int col = 2 + 3 * s;
    if (s == 4) std::fprintf(g, "set xlabel 'electrical angle of the command (degrees)'\n");
    std::fprintf(g,
                 "set title '%s' noenhanced\n"
                 "plot '%s' every ::1 using 1:%d with lines lw 2 title 'a', '' every ::1 using 1:%d with lines lw 2 title 'b', "
                 "'' every ::1 using 1:%d with lines lw 2 title 'c', '' every ::1 using 1:(0.5+0.5*$17) with lines dt 2 lc "
                 "'gray40' title '(v_{ab}+1)/2'\n",
                 titles[s], csv.c_str(), col, col + 1, col + 2);
  }
  std::fprintf(g, "unset multiplot\n");
  return pclose(g) == 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string dir = argc > 1 ? std::string{argv[1]} + "/" : std::string{};
  const std::string csv = dir + "modulation_waveforms.csv", png = dir + "modulation_waveforms.png";
  if (!write_csv(csv)) {
    std::fprintf(stderr, "cannot write %s\n", csv.c_str());
    return 1;
  }
  std::printf("wrote %s\n", csv.c_str());
  if (plot(csv, png)) {
    std::printf("wrote %s\n", png.c_str());
  } else {
    std::printf("gnuplot not available: no picture (the CSV is complete)\n");
  }
  return 0;
}
