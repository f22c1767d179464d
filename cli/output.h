// rotorbench cli: printing helpers — aligned tables, JSON, numbers in trade units.
#pragma once

#include <cstdio>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace rb::cli {

/// A plain text table; numeric-looking cells are right-aligned.
class Table {
 public:
  explicit Table(std::vector<std::string> headers) : headers_(std::move(headers)) {}
  void Row(std::vector<std::string> cells) { rows_.push_back(std::move(cells)); }
  void Print(std::FILE* out = stdout) const;
  bool empty() const { return rows_.empty(); }

 private:
  std::vector<std::string> headers_;
  std::vector<std::vector<std::string>> rows_;
};

/// Prints JSON (two-space indent) and a newline to stdout.
void PrintJson(const nlohmann::json& j);

/// A number with `digits` significant digits, or "-" when NaN.
std::string Num(double v, int digits = 4);

/// v rounded to `digits` significant digits (what the CSV export prints), so that unit
/// conversions do not show as float dust (1234.2499999999998 → 1234.25).
double RoundSignificant(double v, int digits = 12);

/// NaN → null, otherwise the number.
nlohmann::json JsonNum(double v);

}  // namespace rb::cli
