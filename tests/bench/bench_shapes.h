// The benchmark shapes of DESIGN.md section 6, for the microbenchmarks (tests/bench/shapes.py
// holds the same table for scripts/bench and the Python reference loops).
#pragma once

#include <array>
#include <cstdint>
#include <string_view>

namespace credence::bench {

struct Shape {
  std::string_view name;
  std::int64_t inputs;
  std::int64_t hidden;  // two hidden layers of this width
  std::int64_t classes;
  std::int64_t batch;
};

inline constexpr std::array<Shape, 3> kShapes = {{
    {"small", 32, 64, 2, 128},
    {"medium", 100, 256, 5, 256},
    {"large", 256, 1024, 10, 512},
}};

/// 6 x batch x weights: the GEMM FLOPs of one forward + backward step (DESIGN.md 6).
inline double step_flops(const Shape& s) {
  const double weights = static_cast<double>(s.inputs * s.hidden + s.hidden * s.hidden +
                                             s.hidden * s.classes);
  return 6.0 * static_cast<double>(s.batch) * weights;
}

}  // namespace credence::bench
