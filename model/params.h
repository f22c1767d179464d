// rotorbench model: the parameter set of a permanent-magnet brushed DC motor, in SI.
//
// Model (docs/design.md §model):
//   L di/dt = V − R i − Ke ω − Vb·sgn(i)
//   J dω/dt = Kt i − Tc·sgn(ω) − b ω − T_load(ω),   Kt = Ke in SI units.
// Plain value types; thread-safe.
#pragma once

#include <array>
#include <cmath>
#include <optional>
#include <string_view>

namespace rb::model {

/// One motor's constants, SI throughout.
struct MotorParams {
  double R = 0;   ///< armature resistance between the terminals [Ω]
  double L = 0;   ///< armature inductance [H]; 0 = electrically instantaneous
  double Ke = 0;  ///< back-EMF constant [V·s/rad]; equals Kt [N·m/A]
  double J = 0;   ///< rotor inertia [kg·m²]
  double Tc = 0;  ///< Coulomb (running) friction torque [N·m]
  double b = 0;   ///< viscous friction [N·m·s/rad]
  double Vb = 0;  ///< total brush contact drop [V]

  double Kt() const { return Ke; }
};

/// Names of the parameters in a fixed order, used for covariance matrices and JSON.
/// Never renumber: stored fits index covariance rows by this order.
enum ParamIndex : int { kR = 0, kL, kKe, kJ, kTc, kB, kVb, kNumParams };

/// JSON/API names ("R_ohm", "Ke_V_s_per_rad", ...) in ParamIndex order.
inline constexpr std::array<std::string_view, kNumParams> kParamNames = {
    "R_ohm", "L_H", "Ke_V_s_per_rad", "J_kg_m2", "Tc_N_m", "b_N_m_s_per_rad", "Vb_V"};

inline double Get(const MotorParams& p, int index) {
  switch (index) {
    case kR: return p.R;
    case kL: return p.L;
    case kKe: return p.Ke;
    case kJ: return p.J;
    case kTc: return p.Tc;
    case kB: return p.b;
    case kVb: return p.Vb;
  }
  return NAN;
}

inline void Set(MotorParams* p, int index, double v) {
  switch (index) {
    case kR: p->R = v; break;
    case kL: p->L = v; break;
    case kKe: p->Ke = v; break;
    case kJ: p->J = v; break;
    case kTc: p->Tc = v; break;
    case kB: p->b = v; break;
    case kVb: p->Vb = v; break;
  }
}

std::optional<int> ParamIndexFromName(std::string_view name);

/// A load on the shaft: T_load(ω) = constant·sgn(ω) + fan_c·ω·|ω| (fan law, T ∝ ω²).
struct Load {
  double constant_N_m = 0;  ///< constant drag torque [N·m]
  double fan_c = 0;         ///< fan-law coefficient [N·m·s²/rad²]

  double Torque(double w) const {
    const double s = (w > 0) - (w < 0);
    return constant_N_m * s + fan_c * w * std::fabs(w);
  }
};

/// What kind of run a stretch of samples is. Stored as text; never rename the strings.
enum class RunKind { kSpinUp, kCoastDown, kLocked, kSteady, kGenerator, kFree, kLoaded };

std::string_view RunKindName(RunKind k);  // "spinup", "coastdown", ...
std::optional<RunKind> RunKindFromName(std::string_view name);
/// "spinup, coastdown, locked, steady, generator, free, loaded" for error messages.
const char* RunKindList();

}  // namespace rb::model
