// Trade-unit conversions against the SI identities they rest on.
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "model/units.h"

using namespace rb::units;

TEST_CASE("Kv·Kt = 60/(2π) in (rpm/V)·(N·m/A) for any Ke (identity, domain.md §0)") {
  for (double ke : {1e-4, 6.2e-3, 0.01, 0.2215, 3.0}) {
    const double kv = KeToKvRpmPerVolt(ke);
    const double kt = ke;  // Kt = Ke in SI units (power balance)
    CHECK(kv * kt == doctest::Approx(60.0 / (2.0 * std::numbers::pi)).epsilon(1e-14));
    CHECK(kv * kt == doctest::Approx(9.549296586).epsilon(1e-10));
    CHECK(KvRpmPerVoltToKe(kv) == doctest::Approx(ke).epsilon(1e-14));
  }
}

TEST_CASE("Kv 1000 rpm/V is Kt 9.5493 mN·m/A (domain.md §0 check value)") {
  const double kt = KvRpmPerVoltToKe(1000.0);
  CHECK(NmPerAToMilliNmPerA(kt) == doctest::Approx(9.5493).epsilon(1e-5));
}

TEST_CASE("rpm, g·cm², mN·m and mΩ round trips and known values") {
  // 60 rpm is one revolution per second = 2π rad/s (definition of the radian).
  CHECK(RpmToRadPerSec(60.0) == doctest::Approx(2.0 * std::numbers::pi).epsilon(1e-15));
  CHECK(RadPerSecToRpm(RpmToRadPerSec(5699.08)) == doctest::Approx(5699.08).epsilon(1e-15));
  // 1 g·cm² = 1e-3 kg · 1e-4 m² = 1e-7 kg·m².
  CHECK(GCm2ToKgM2(16.0) == doctest::Approx(1.6e-6).epsilon(1e-15));
  CHECK(KgM2ToGCm2(1.6e-6) == doctest::Approx(16.0).epsilon(1e-15));
  CHECK(MilliNmToNm(0.4) == doctest::Approx(4e-4).epsilon(1e-15));
  CHECK(OhmToMilliOhm(1.8) == doctest::Approx(1800.0).epsilon(1e-15));
}

TEST_CASE("unit spellings accepted at the edges") {
  CHECK(FindUnit(Quantity::kTime, "ms")->scale == 1e-3);
  CHECK(FindUnit(Quantity::kCurrent, "mA")->scale == 1e-3);
  CHECK(FindUnit(Quantity::kCurrent, "ma")->scale == 1e-3);  // alias
  CHECK(FindUnit(Quantity::kVoltage, "mV")->scale == 1e-3);
  CHECK(FindUnit(Quantity::kSpeed, "rad/s")->scale == 1.0);
  CHECK(FindUnit(Quantity::kSpeed, "rpm")->scale == doctest::Approx(std::numbers::pi / 30));
  CHECK_FALSE(FindUnit(Quantity::kCurrent, "uA"));
  CHECK_FALSE(FindUnit(Quantity::kTime, "mA"));  // right spelling, wrong quantity
  CHECK(AcceptedUnits(Quantity::kCurrent) == "A, mA");
}
