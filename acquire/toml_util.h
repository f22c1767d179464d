// rotorbench acquire (internal): reading the small TOML files people write (rig-sim
// motor files, instrument maps, daemon configs) with one-line errors "FILE:LINE: ...".
// toml++ exceptions stop here. Thread-safe (no shared state).
#pragma once

#include <optional>
#include <set>
#include <string>

#include "base/status.h"

#include <toml++/toml.h>

namespace rb::acquire {

/// A parsed TOML document with the name used in messages.
class TomlDoc {
 public:
  static Result<TomlDoc> Parse(const std::string& path);
  static Result<TomlDoc> ParseText(const std::string& text, const std::string& name);

  const toml::table& root() const { return table_; }
  const std::string& name() const { return name_; }

 private:
  std::string name_;
  toml::table table_;
};

/// "FILE:LINE" of a key in a table (or "FILE" when unknown).
std::string Where(const TomlDoc& doc, const toml::table& t, const std::string& key);
/// Fails on the first key of `t` not in `allowed`, naming it and listing the allowed ones.
Status CheckKeys(const TomlDoc& doc, const toml::table& t, const std::set<std::string>& allowed,
                 const std::string& table_name);
/// A number (integer or float) under `key`, if present; wrong types are errors.
Result<std::optional<double>> GetNumber(const TomlDoc& doc, const toml::table& t, const std::string& key);
Result<std::optional<std::string>> GetString(const TomlDoc& doc, const toml::table& t,
                                             const std::string& key);
/// A sub-table, or nullptr when absent; an error when `key` is not a table.
Result<const toml::table*> GetTable(const TomlDoc& doc, const toml::table& t, const std::string& key);

}  // namespace rb::acquire
