#include "model/params.h"

namespace rb::model {
namespace {
constexpr std::array<std::pair<RunKind, std::string_view>, 7> kKinds = {{
    {RunKind::kSpinUp, "spinup"},
    {RunKind::kCoastDown, "coastdown"},
    {RunKind::kLocked, "locked"},
    {RunKind::kSteady, "steady"},
    {RunKind::kGenerator, "generator"},
    {RunKind::kFree, "free"},
    {RunKind::kLoaded, "loaded"},
}};
}  // namespace

std::optional<int> ParamIndexFromName(std::string_view name) {
  for (int i = 0; i < kNumParams; ++i) {
    if (kParamNames[i] == name) return i;
  }
  return std::nullopt;
}

std::string_view RunKindName(RunKind k) {
  for (const auto& [kind, name] : kKinds) {
    if (kind == k) return name;
  }
  return "?";
}

std::optional<RunKind> RunKindFromName(std::string_view name) {
  for (const auto& [kind, n] : kKinds) {
    if (n == name) return kind;
  }
  return std::nullopt;
}

const char* RunKindList() { return "spinup, coastdown, locked, steady, generator, free, loaded"; }

}  // namespace rb::model
