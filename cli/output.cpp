#include "cli/output.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>

namespace rb::cli {
namespace {

bool LooksNumeric(const std::string& s) {
  if (s.empty()) return false;
  return std::all_of(s.begin(), s.end(), [](char c) {
    return std::isdigit(static_cast<unsigned char>(c)) || c == '.' || c == '-' || c == '+' ||
           c == 'e' || c == 'E' || c == ' ';
  });
}

}  // namespace

void Table::Print(std::FILE* out) const {
  std::vector<size_t> width(headers_.size(), 0);
  for (size_t c = 0; c < headers_.size(); ++c) width[c] = headers_[c].size();
  for (const auto& r : rows_) {
    for (size_t c = 0; c < r.size() && c < width.size(); ++c) {
      width[c] = std::max(width[c], r[c].size());
    }
  }
  auto line = [&](const std::vector<std::string>& cells, bool header) {
    std::string s;
    for (size_t c = 0; c < width.size(); ++c) {
      const std::string cell = c < cells.size() ? cells[c] : "";
      const bool right = !header && LooksNumeric(cell);
      if (c) s += "  ";
      s += right ? fmt::format("{:>{}}", cell, width[c]) : fmt::format("{:<{}}", cell, width[c]);
    }
    while (!s.empty() && s.back() == ' ') s.pop_back();
    std::fprintf(out, "%s\n", s.c_str());
  };
  line(headers_, true);
  std::vector<std::string> rule;
  for (size_t w : width) rule.push_back(std::string(w, '-'));
  line(rule, true);
  for (const auto& r : rows_) line(r, false);
}

void PrintJson(const nlohmann::json& j) { std::printf("%s\n", j.dump(2).c_str()); }

std::string Num(double v, int digits) {
  if (std::isnan(v)) return "-";
  return fmt::format("{:.{}g}", v, digits);
}

double RoundSignificant(double v, int digits) {
  if (!std::isfinite(v)) return v;
  return std::strtod(fmt::format("{:.{}g}", v, digits).c_str(), nullptr);
}

nlohmann::json JsonNum(double v) {
  if (!std::isfinite(v)) return nullptr;
  return v;
}

}  // namespace rb::cli
