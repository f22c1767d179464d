// Test helper: reads a NIST StRD nonlinear-regression file (fixtures/nist/*.dat) and
// evaluates its model. Layout per the NIST files: line ranges in the "File Format" block,
// one parameter line "bK = start1 start2 certified sd", then RSS, RSD, degrees of freedom
// and observations, data from the stated line to the end (y first, then x).
#pragma once

#include <cmath>
#include <fstream>
#include <optional>
#include <regex>
#include <sstream>
#include <string>
#include <type_traits>
#include <vector>

namespace rb::testing::nist {

struct Dataset {
  std::string name;
  std::string level;  // "Lower", "Average", "Higher"
  int p = 0;
  std::vector<double> start1, start2, certified, certified_sd;
  double certified_rss = 0;
  int n = 0;
  // Data in long double (exact decimal input matters for the near-zero-residual sets).
  std::vector<long double> y, x, x2;
};

inline std::optional<Dataset> Read(const std::string& path, const std::string& name) {
  std::ifstream f(path, std::ios::binary);
  if (!f) return std::nullopt;
  std::vector<std::string> lines;
  std::string line;
  while (std::getline(f, line)) {
    if (!line.empty() && line.back() == '\r') line.pop_back();
    lines.push_back(line);
  }
  Dataset d;
  d.name = name;
  std::smatch m;
  int cert_first = 0, cert_last = 0, data_first = 0;
  const std::regex cert_re(R"(Certified Values\s+\(lines\s+(\d+)\s+to\s+(\d+)\))");
  const std::regex data_re(R"(Data\s+\(lines\s+(\d+)\s+to\s+(\d+)\))");
  const std::regex level_re(R"((Lower|Average|Higher) Level of Difficulty)");
  for (const std::string& l : lines) {
    if (std::regex_search(l, m, cert_re)) cert_first = std::stoi(m[1]), cert_last = std::stoi(m[2]);
    if (std::regex_search(l, m, data_re)) data_first = std::stoi(m[1]);
    if (std::regex_search(l, m, level_re)) d.level = m[1];
  }
  if (!cert_first || !data_first) return std::nullopt;
  const std::regex param_re(R"(^\s*b(\d+)\s*=\s*(\S+)\s+(\S+)\s+(\S+)\s+(\S+))");
  for (int k = cert_first; k <= cert_last; ++k) {
    const std::string& l = lines[static_cast<size_t>(k - 1)];
    if (std::regex_search(l, m, param_re)) {
      d.start1.push_back(std::stod(m[2]));
      d.start2.push_back(std::stod(m[3]));
      d.certified.push_back(std::stod(m[4]));
      d.certified_sd.push_back(std::stod(m[5]));
    } else if (l.find("Residual Sum of Squares:") != std::string::npos) {
      d.certified_rss = std::stod(l.substr(l.find(':') + 1));
    }
  }
  d.p = static_cast<int>(d.certified.size());
  for (size_t k = static_cast<size_t>(data_first - 1); k < lines.size(); ++k) {
    std::istringstream in(lines[k]);
    std::vector<long double> v;
    std::string tok;
    while (in >> tok) v.push_back(std::strtold(tok.c_str(), nullptr));
    if (v.size() < 2) continue;
    d.y.push_back(v[0]);
    d.x.push_back(v[1]);
    if (v.size() > 2) d.x2.push_back(v[2]);
  }
  d.n = static_cast<int>(d.y.size());
  return d;
}

template <typename T>
T Pi() {
  if constexpr (std::is_same_v<T, long double>) {
    return 3.141592653589793238462643383279502884L;
  } else {
    return T(3.141592653589793238462643383279502884);
  }
}

/// The model of dataset `name` at predictor x (x2 for Nelson). For Nelson the response is
/// log(y), so Residual() compares log(y) with this value.
template <typename T, typename S>
T Model(const std::string& name, const T* b, S xs, S x2s) {
  using std::atan;
  using std::cos;
  using std::exp;
  using std::pow;
  using std::sin;
  const T x = T(xs);
  const T one = T(1.0);
  if (name == "Misra1a" || name == "BoxBOD") return b[0] * (one - exp(-b[1] * x));
  if (name == "Chwirut1" || name == "Chwirut2") return exp(-b[0] * x) / (b[1] + b[2] * x);
  if (name.rfind("Lanczos", 0) == 0) {
    return b[0] * exp(-b[1] * x) + b[2] * exp(-b[3] * x) + b[4] * exp(-b[5] * x);
  }
  if (name.rfind("Gauss", 0) == 0) {
    return b[0] * exp(-b[1] * x) + b[2] * exp(-(x - b[3]) * (x - b[3]) / (b[4] * b[4])) +
           b[5] * exp(-(x - b[6]) * (x - b[6]) / (b[7] * b[7]));
  }
  if (name == "DanWood") return b[0] * pow(x, b[1]);
  if (name == "Misra1b") return b[0] * (one - pow(one + b[1] * x / T(2.0), -2.0));
  if (name == "Kirby2") {
    return (b[0] + b[1] * x + b[2] * x * x) / (one + b[3] * x + b[4] * x * x);
  }
  if (name == "Hahn1" || name == "Thurber") {
    return (b[0] + b[1] * x + b[2] * x * x + b[3] * x * x * x) /
           (one + b[4] * x + b[5] * x * x + b[6] * x * x * x);
  }
  if (name == "Nelson") return b[0] - b[1] * x * exp(-b[2] * T(x2s));
  if (name == "MGH17") return b[0] + b[1] * exp(-x * b[3]) + b[2] * exp(-x * b[4]);
  if (name == "Misra1c") return b[0] * (one - pow(one + T(2.0) * b[1] * x, -0.5));
  if (name == "Misra1d") return b[0] * b[1] * x / (one + b[1] * x);
  if (name == "Roszman1") return b[0] - b[1] * x - atan(b[2] / (x - b[3])) / Pi<T>();
  if (name == "ENSO") {
    const T w = T(2.0) * Pi<T>() * x;
    return b[0] + b[1] * cos(w / T(12.0)) + b[2] * sin(w / T(12.0)) + b[4] * cos(w / b[3]) +
           b[5] * sin(w / b[3]) + b[7] * cos(w / b[6]) + b[8] * sin(w / b[6]);
  }
  if (name == "MGH09") return b[0] * (x * x + x * b[1]) / (x * x + x * b[2] + b[3]);
  if (name == "Rat42") return b[0] / (one + exp(b[1] - b[2] * x));
  if (name == "MGH10") return b[0] * exp(b[1] / (x + b[2]));
  if (name == "Eckerle4") {
    const T u = (x - b[2]) / b[1];
    return (b[0] / b[1]) * exp(T(-0.5) * u * u);
  }
  if (name == "Rat43") return b[0] / pow(one + exp(b[1] - b[2] * x), one / b[3]);
  if (name == "Bennett5") return b[0] * pow(b[1] + x, -one / b[2]);
  return T(NAN);
}

}  // namespace rb::testing::nist
