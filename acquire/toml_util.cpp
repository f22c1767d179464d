#include "acquire/toml_util.h"

#include "base/text.h"

namespace rb::acquire {

Result<TomlDoc> TomlDoc::ParseText(const std::string& text, const std::string& name) {
  TomlDoc d;
  d.name_ = name;
  try {
    d.table_ = toml::parse(text, name);
  } catch (const toml::parse_error& e) {
    return Status::InvalidArgument(name + ":" + std::to_string(e.source().begin.line) + ": " +
                                   Printable(e.description(), 200) + "; expected TOML");
  }
  return d;
}

Result<TomlDoc> TomlDoc::Parse(const std::string& path) {
  TomlDoc d;
  d.name_ = path;
  try {
    d.table_ = toml::parse_file(path);
  } catch (const toml::parse_error& e) {
    const std::string desc = Printable(e.description(), 200);
    if (e.source().begin.line == 0 || desc.find("File could not be opened") != std::string::npos) {
      return Status::NotFound(path + ": cannot read (" + desc + ")");
    }
    return Status::InvalidArgument(path + ":" + std::to_string(e.source().begin.line) + ": " + desc +
                                   "; expected TOML");
  }
  return d;
}

std::string Where(const TomlDoc& doc, const toml::table& t, const std::string& key) {
  const toml::node* n = t.get(key);
  const auto& src = n ? n->source() : t.source();
  if (src.begin.line > 0) return doc.name() + ":" + std::to_string(src.begin.line);
  return doc.name();
}

Status CheckKeys(const TomlDoc& doc, const toml::table& t, const std::set<std::string>& allowed,
                 const std::string& table_name) {
  for (const auto& [k, v] : t) {
    const std::string key(k.str());
    if (allowed.count(key)) continue;
    std::string list;
    for (const std::string& a : allowed) list += (list.empty() ? "" : ", ") + a;
    return Status::InvalidArgument(Where(doc, t, key) + ": unknown key '" + Printable(key) + "' in " +
                                   (table_name.empty() ? std::string("the top level") : "[" + table_name + "]") +
                                   "; expected one of " + list);
  }
  return Status::Ok();
}

Result<std::optional<double>> GetNumber(const TomlDoc& doc, const toml::table& t, const std::string& key) {
  const toml::node* n = t.get(key);
  if (!n) return std::optional<double>();
  if (auto v = n->value<double>()) return std::optional<double>(*v);  // ints convert too
  return Status::InvalidArgument(Where(doc, t, key) + ": '" + key + "' is not a number");
}

Result<std::optional<std::string>> GetString(const TomlDoc& doc, const toml::table& t,
                                             const std::string& key) {
  const toml::node* n = t.get(key);
  if (!n) return std::optional<std::string>();
  if (auto v = n->value<std::string>()) return std::optional<std::string>(*v);
  return Status::InvalidArgument(Where(doc, t, key) + ": '" + key + "' is not a string");
}

Result<const toml::table*> GetTable(const TomlDoc& doc, const toml::table& t, const std::string& key) {
  const toml::node* n = t.get(key);
  if (!n) return static_cast<const toml::table*>(nullptr);
  if (const toml::table* tt = n->as_table()) return tt;
  return Status::InvalidArgument(Where(doc, t, key) + ": '" + Printable(key) + "' is not a table; expected [" +
                                 Printable(key) + "]");
}

}  // namespace rb::acquire
