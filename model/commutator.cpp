#include "model/commutator.h"

#include <cmath>
#include <numbers>

namespace rb::model {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

double Wrap(double a) {
  a = std::fmod(a, kTwoPi);
  return a < 0 ? a + kTwoPi : a;
}

/// Segments touched by a brush centred at `centre`: first and last index (a contiguous
/// run of one or two segments, counted forward).
void Touched(int k, double pitch, double half_width, double theta, double centre, int* first,
             int* last) {
  // Segment j spans [theta + j·pitch, theta + (j+1)·pitch). Position of the brush edges
  // relative to the rotor, in segment units.
  const double lo = Wrap(centre - half_width - theta) / pitch;
  const double hi = lo + 2.0 * half_width / pitch;
  *first = static_cast<int>(std::floor(lo)) % k;
  const double hi_edge = std::nextafter(hi, -INFINITY);  // an edge exactly on a gap touches one
  *last = static_cast<int>(std::floor(hi_edge)) % k;
}

}  // namespace

double BrushResistanceFactor(int segments, double brush_fraction, double theta) {
  const int k = segments;
  if (k < 2) return 1.0;
  const double pitch = kTwoPi / k;
  const double half_width = 0.5 * brush_fraction * pitch;
  int a0, a1, b0, b1;
  Touched(k, pitch, half_width, theta, 0.0, &a0, &a1);
  Touched(k, pitch, half_width, theta, std::numbers::pi, &b0, &b1);
  // Coils between the two brush node sets along each arc of the ring.
  const int n1 = ((b0 - a1) % k + k) % k;
  const int n2 = ((a0 - b1) % k + k) % k;
  if (n1 == 0 || n2 == 0) return 0.0;  // brushes short each other (not for k ≥ 3)
  return static_cast<double>(n1) * n2 / (n1 + n2);
}

double MeanBrushResistanceFactor(int segments, double brush_fraction) {
  constexpr int kSteps = 3600;
  double sum = 0;
  for (int s = 0; s < kSteps; ++s) {
    sum += BrushResistanceFactor(segments, brush_fraction, (s + 0.5) * kTwoPi / kSteps);
  }
  return sum / kSteps;
}

int RipplesPerRevolution(int segments) { return segments % 2 == 0 ? segments : 2 * segments; }

}  // namespace rb::model
