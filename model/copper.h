// rotorbench model: annealed copper, the conductor of every winding we deal with.
//
// IEC 60028 (international standard of resistance for copper): resistivity at 20 °C
// 1/58 Ω·mm²/m, temperature coefficient α20 = 0.00393 /K. SI; pure; thread-safe.
#pragma once

namespace rb::model {

inline constexpr double kCopperResistivity20 = 1.0 / 58.0 * 1e-6;  ///< Ω·m (= 1/58 Ω·mm²/m)
inline constexpr double kCopperAlpha20 = 0.00393;                  ///< 1/K at 20 °C
inline constexpr double kCopperDensity = 8890.0;                   ///< kg/m³ (IEC 60028)

/// R(T) = R20 · (1 + α20·(T − 20 °C)).
constexpr double CopperResistanceAt(double r20, double celsius) {
  return r20 * (1.0 + kCopperAlpha20 * (celsius - 20.0));
}

/// Inverse of CopperResistanceAt: the 20 °C value of a resistance measured at T.
constexpr double CopperResistanceTo20C(double r_measured, double celsius) {
  return r_measured / (1.0 + kCopperAlpha20 * (celsius - 20.0));
}

/// Winding temperature from a resistance rise (same linear law): T = 20 + (R/R20 − 1)/α20.
constexpr double CopperTemperatureFromResistance(double r, double r20) {
  return 20.0 + (r / r20 - 1.0) / kCopperAlpha20;
}

}  // namespace rb::model
