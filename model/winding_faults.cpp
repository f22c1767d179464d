#include "model/winding_faults.h"

#include <Eigen/Dense>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <numeric>

namespace rb::model {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr double kInf = std::numeric_limits<double>::infinity();

double Wrap(double a) {
  a = std::fmod(a, kTwoPi);
  return a < 0 ? a + kTwoPi : a;
}

/// Segments under a brush centred at `centre` (segment j spans [θ + j·p, θ + (j+1)·p)):
/// one segment, or two while the brush covers a gap. Same geometry as model/commutator.
std::vector<int> Touched(int k, double half_width, double theta, double centre) {
  const double pitch = kTwoPi / k;
  const double lo = Wrap(centre - half_width - theta) / pitch;
  const double hi = std::nextafter(lo + 2.0 * half_width / pitch, -kInf);
  const int first = static_cast<int>(std::floor(lo)) % k;
  const int last = static_cast<int>(std::floor(hi)) % k;
  std::vector<int> out{first};
  if (last != first) out.push_back(last);
  return out;
}

int Find(std::vector<int>& parent, int x) {
  while (parent[static_cast<size_t>(x)] != x) x = parent[static_cast<size_t>(x)];
  return x;
}

}  // namespace

RingPoint RingArmatureAt(const std::vector<CoilState>& coils, double brush_fraction,
                         double theta) {
  const int k = static_cast<int>(coils.size());
  const double pitch = kTwoPi / k;
  const double half_width = 0.5 * brush_fraction * pitch;
  // Merge the segments each brush touches into one node (ideal contact; the contact drop
  // is the separate Vb of the motor model).
  std::vector<int> parent(static_cast<size_t>(k));
  std::iota(parent.begin(), parent.end(), 0);
  const std::vector<int> pos = Touched(k, half_width, theta, 0.0);
  const std::vector<int> neg = Touched(k, half_width, theta, std::numbers::pi);
  for (size_t i = 1; i < pos.size(); ++i) parent[static_cast<size_t>(Find(parent, pos[i]))] = Find(parent, pos[0]);
  for (size_t i = 1; i < neg.size(); ++i) parent[static_cast<size_t>(Find(parent, neg[i]))] = Find(parent, neg[0]);
  const int p = Find(parent, pos[0]), m = Find(parent, neg[0]);
  if (p == m) return {0.0, 0.0, 0.0};  // brushes shorted together (not for K ≥ 3)

  // Unknown potentials: every group except the reference m.
  std::vector<int> index(static_cast<size_t>(k), -1);
  int n = 0;
  for (int j = 0; j < k; ++j) {
    const int g = Find(parent, j);
    if (g != m && index[static_cast<size_t>(g)] < 0) index[static_cast<size_t>(g)] = n++;
  }
  Eigen::MatrixXd lap = Eigen::MatrixXd::Zero(n, n);
  Eigen::VectorXd rhs_emf = Eigen::VectorXd::Zero(n);
  std::vector<double> g(static_cast<size_t>(k)), e(static_cast<size_t>(k));
  for (int c = 0; c < k; ++c) {
    const CoilState& s = coils[static_cast<size_t>(c)];
    g[static_cast<size_t>(c)] = std::isfinite(s.resistance_factor) ? 1.0 / s.resistance_factor : 0.0;
    e[static_cast<size_t>(c)] = s.emf_factor * std::sin(theta + (c + 1) * pitch);
  }
  // Coil c from node a = c to node b = c+1 carries i = g·(V_a − V_b + e) from a to b.
  for (int c = 0; c < k; ++c) {
    const int a = index[static_cast<size_t>(Find(parent, c))];
    const int b = index[static_cast<size_t>(Find(parent, (c + 1) % k))];
    const double gc = g[static_cast<size_t>(c)], ec = e[static_cast<size_t>(c)];
    if (Find(parent, c) == Find(parent, (c + 1) % k)) continue;  // shorted by a brush
    if (a >= 0) { lap(a, a) += gc; rhs_emf(a) -= gc * ec; }
    if (b >= 0) { lap(b, b) += gc; rhs_emf(b) += gc * ec; }
    if (a >= 0 && b >= 0) { lap(a, b) -= gc; lap(b, a) -= gc; }
  }
  // A node cut off by open coils floats; tie it weakly to the reference.
  for (int i = 0; i < n; ++i) lap(i, i) += 1e-12;
  const Eigen::PartialPivLU<Eigen::MatrixXd> lu(lap);
  const int ip = index[static_cast<size_t>(p)];

  RingPoint out;
  // Open circuit: KCL with only the coils' EMFs driving.
  const Eigen::VectorXd v_oc = lu.solve(rhs_emf);
  out.emf = v_oc(ip);
  auto potential = [&](const Eigen::VectorXd& v, int node) {
    const int i = index[static_cast<size_t>(Find(parent, node))];
    return i >= 0 ? v(i) : 0.0;
  };
  for (int c = 0; c < k; ++c) {
    const double i_c = g[static_cast<size_t>(c)] *
                       (potential(v_oc, c) - potential(v_oc, (c + 1) % k) + e[static_cast<size_t>(c)]);
    out.circulating += g[static_cast<size_t>(c)] > 0 ? i_c * i_c / g[static_cast<size_t>(c)] : 0.0;
  }
  // Resistance: EMFs off, 1 A into the positive brush.
  Eigen::VectorXd inj = Eigen::VectorXd::Zero(n);
  inj(ip) = 1.0;
  const double r = lu.solve(inj)(ip);
  out.resistance = r > 1e9 ? kInf : r;
  if (!std::isfinite(out.resistance)) out.emf = 0;  // no path: nothing reaches the brushes
  return out;
}

RingAverages RingArmatureAverages(const std::vector<CoilState>& coils, double brush_fraction,
                                  int steps) {
  double inv_r = 0, k_over_r = 0, k2_over_r = 0, circ = 0;
  RingAverages out;
  out.resistance_min = kInf;
  out.resistance_max = 0;
  for (int s = 0; s < steps; ++s) {
    const RingPoint pt = RingArmatureAt(coils, brush_fraction, (s + 0.5) * kTwoPi / steps);
    const double y = std::isfinite(pt.resistance) ? 1.0 / pt.resistance : 0.0;
    inv_r += y;
    k_over_r += pt.emf * y;
    k2_over_r += pt.emf * pt.emf * y;
    circ += pt.circulating;
    out.resistance_min = std::min(out.resistance_min, pt.resistance);
    out.resistance_max = std::max(out.resistance_max, pt.resistance);
  }
  inv_r /= steps;
  k_over_r /= steps;
  k2_over_r /= steps;
  circ /= steps;
  out.resistance = inv_r > 0 ? 1.0 / inv_r : kInf;
  out.ke = inv_r > 0 ? k_over_r / inv_r : 0.0;
  out.drag = (inv_r > 0 ? k2_over_r - k_over_r * k_over_r / inv_r : 0.0) + circ;
  return out;
}

FaultSignature RingFaultSignature(int coils, double brush_fraction, int faulty_coil,
                                  const CoilState& fault) {
  const std::vector<CoilState> healthy(static_cast<size_t>(coils));
  std::vector<CoilState> faulty = healthy;
  faulty[static_cast<size_t>(faulty_coil % coils)] = fault;
  const RingAverages h = RingArmatureAverages(healthy, brush_fraction);
  const RingAverages f = RingArmatureAverages(faulty, brush_fraction);
  FaultSignature sig;
  sig.resistance_ratio = f.resistance / h.resistance;
  sig.ke_ratio = f.ke / h.ke;
  sig.drag = (f.drag - h.drag) * h.resistance / (h.ke * h.ke);
  return sig;
}

}  // namespace rb::model
