// The characteristic-curve figures: speed, current, output power and efficiency against
// output torque at one supply voltage, one colour per fit, ±2u bands, operating points.
#include <cmath>

#include "report/report.h"

namespace rb::report {
namespace {

struct Quantity {
  const char* id;
  const char* title;
  const char* axis;
  DisplayUnit unit;
  double model::OperatingPoint::*field;
};

std::string FitLabel(const ReportFit& f) {
  std::string s = f.id > 0 ? "fit " + std::to_string(f.id) : "fit";
  if (f.created_utc.size() >= 10) s += " (" + f.created_utc.substr(0, 10) + ")";
  return s;
}

}  // namespace

std::vector<Figure> CurveFigures(const std::vector<ReportFit>& fits, double voltage, int points) {
  const DisplayUnit torque = TorqueUnit();
  const Quantity quantities[] = {
      {"speed", "Speed", "speed [rpm]", SpeedUnit(), &model::OperatingPoint::speed},
      {"current", "Current", "current [A]", CurrentUnit(), &model::OperatingPoint::current},
      {"power", "Output power", "output power [W]", PowerUnit(), &model::OperatingPoint::power_out},
      {"efficiency", "Efficiency", "efficiency [%]", EfficiencyUnit(),
       &model::OperatingPoint::efficiency},
  };
  std::vector<model::CurvesU> curves;
  std::vector<model::Characteristics> chars;
  for (const ReportFit& f : fits) {
    curves.push_back(model::CharacteristicCurvesU(f.summary.Estimate(), voltage, points));
    chars.push_back(model::ComputeCharacteristics(f.summary.Params(), voltage));
  }
  std::vector<Figure> out;
  for (const Quantity& q : quantities) {
    Figure fig;
    fig.id = std::string("curve-") + q.id;
    fig.title = std::string(q.title) + " at " + FormatSetting(voltage) + " V";
    fig.width = 480;
    fig.height = 330;
    fig.x.title = std::string("output torque [") + torque.unit + "]";
    fig.x.include_zero = true;
    Panel panel;
    panel.y.title = q.axis;
    panel.y.min = 0;  // every curve is ≥ 0 (the model clamps at stall); bands stop there
    // Bands first (underneath), then lines, then markers.
    for (size_t i = 0; i < fits.size(); ++i) {
      const std::string colour = SeriesColour(static_cast<int>(i));
      Series band;
      band.style = Style::kBand;
      band.colour = colour;
      band.opacity = 0.18;
      band.label = "±2u band";
      Series line;
      line.style = i == 0 ? Style::kLine : Style::kDashed;
      line.colour = colour;
      line.width = i == 0 ? 2.0 : 1.8;
      line.label = FitLabel(fits[i]);
      const model::CurvesU& c = curves[i];
      for (size_t k = 0; k < c.value.size(); ++k) {
        const double x = torque.from_si(c.value[k].torque);
        const Shown y = ToDisplay(q.unit, c.value[k].*q.field, c.u[k].*q.field);
        line.x.push_back(x);
        line.y.push_back(y.value);
        band.x.push_back(x);
        band.y.push_back(y.value - 2 * y.u);
        band.y2.push_back(y.value + 2 * y.u);
      }
      panel.series.push_back(std::move(band));
      panel.series.push_back(std::move(line));
    }
    for (size_t i = 0; i < fits.size(); ++i) {
      const std::string colour = SeriesColour(static_cast<int>(i));
      const model::Characteristics& ch = chars[i];
      const bool primary = i == 0;
      auto mark = [&](const model::OperatingPoint& op, char shape, const char* legend,
                      const std::string& text) {
        panel.markers.push_back({torque.from_si(op.torque), q.unit.from_si(op.*q.field), colour,
                                 shape, legend, primary ? text : ""});
      };
      const std::string qid = q.id;
      if (qid == "speed" || qid == "current") {
        model::OperatingPoint nl, st;
        nl.speed = ch.no_load_speed;
        nl.current = ch.no_load_current;
        st.torque = ch.stall_torque;
        st.current = ch.stall_current;
        mark(nl, 's', "no load", "");
        mark(st, '^', "stall", "");
      }
      mark(ch.max_power, 'o', "max power",
           qid == "power" ? "max " + FormatValue(ch.max_power.power_out, 3) + " W" : "");
      mark(ch.max_efficiency, 'd', "max efficiency",
           qid == "efficiency"
               ? "max " + FormatValue(EfficiencyUnit().from_si(ch.max_efficiency.efficiency), 3) +
                     " %"
               : "");
    }
    fig.panels.push_back(std::move(panel));
    out.push_back(std::move(fig));
  }
  return out;
}

}  // namespace rb::report
