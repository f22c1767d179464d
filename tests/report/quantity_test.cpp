// Numbers for people: value ± u with u to two significant digits and the value to the same
// decimal place (GUM, JCGM 100:2008 §7.2.6), trade units through model/units.h.
#include "report/quantity.h"

#include <doctest/doctest.h>

#include <cmath>

#include "model/units.h"

using namespace rb::report;

TEST_CASE("value ± u: u to two significant digits, the value to the same place") {
  // GUM §7.2.2 example: m_S = 100.021 47 g with u_c = 0.35 mg (values from memory).
  CHECK(FormatWithU(100.02147, 0.00035) == "100.02147 ± 0.00035");
  CHECK(FormatWithU(1.80341, 0.01234) == "1.803 ± 0.012");
  CHECK(FormatWithU(8749.3, 85.2) == "8749 ± 85");
  CHECK(FormatWithU(0.0941234, 0.00139) == "0.0941 ± 0.0014");
  CHECK(FormatWithU(15321, 1234) == "15300 ± 1200");
  CHECK(FormatWithU(1.2345, 0.0999) == "1.23 ± 0.10");    // u rounds up a decade
  CHECK(FormatWithU(-0.00001, 0.01) == "0.000 ± 0.010");  // never "-0.000"
  CHECK(FormatWithU(4.51e-9, 1.2e-10) == "(4.51 ± 0.12)e-9");
  CHECK(FormatWithU(1540.3, 0) == "1540");  // no usable u: 4 significant digits
  CHECK(FormatWithU(1540.3, NAN) == "1540");
  CHECK(FormatWithU(NAN, 1) == "–");
}

TEST_CASE("plain values and relative uncertainties") {
  CHECK(FormatValue(9.99996, 4) == "10.00");
  CHECK(FormatValue(1234567, 4) == "1235000");
  CHECK(FormatValue(0.012345, 3) == "0.0123");
  CHECK(FormatValue(0, 4) == "0");
  CHECK(FormatValue(2.5e-7, 3) == "2.50e-07");
  CHECK(FormatRelative(100, 1) == "1.0 %");
  CHECK(FormatRelative(0, 1) == "–");
}

TEST_CASE(
    "display units: rpm, mN·m, g·cm², and Kv from Ke with its uncertainty scaled by the "
    "derivative (relative u carries over: Kv = 60/(2π·Ke))") {
  Shown s = ToDisplay(SpeedUnit(), 100.0, 1.0);
  CHECK(s.value == doctest::Approx(100.0 * 60 / (2 * rb::units::kPi)));
  CHECK(s.u == doctest::Approx(60 / (2 * rb::units::kPi)));
  CHECK(ToDisplay(TorqueUnit(), 0.0123, 0).value == doctest::Approx(12.3));
  CHECK(ToDisplay(InertiaUnit(), 1.6e-6, 0).value == doctest::Approx(16.0));
  CHECK(ToDisplay(TimeMsUnit(), 0.0742, 0).value == doctest::Approx(74.2));
  CHECK(ToDisplay(EfficiencyUnit(), 0.6778, 0).value == doctest::Approx(67.78));
  s = ToDisplay(KvUnit(), 6.2e-3, 6.2e-5);
  CHECK(s.value == doctest::Approx(1540.22).epsilon(1e-5));  // 9.5493/6.2e-3
  CHECK(s.u / s.value == doctest::Approx(0.01).epsilon(1e-6));
  CHECK(std::string(KvUnit().unit) == "rpm/V");
}

TEST_CASE("settings print without trailing zeros") {
  CHECK(FormatSetting(6.0) == "6");
  CHECK(FormatSetting(4.5) == "4.5");
  CHECK(FormatSetting(12.25) == "12.25");
  CHECK(FormatSetting(NAN) == "–");
}
