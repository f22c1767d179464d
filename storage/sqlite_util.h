// rotorbench storage (internal): a thin RAII layer over the SQLite C API.
//
// Statements are prepared once per connection and cached by SQL text; a Stmt borrows a
// cached statement and resets it on destruction. Errors become Status values whose
// message says what was being done. Not thread-safe (one connection per thread).
#pragma once

#include <sqlite3.h>

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>

#include "base/status.h"
#include "storage/storage.h"

namespace rb::storage {

/// Maps an SQLite result code to a Status with `what` as context.
Status SqliteError(sqlite3* db, int rc, std::string_view what);

struct Database::Impl {
  sqlite3* db = nullptr;
  std::string path;
  std::string backup_path;
  int version = 0;
  bool in_txn = false;
  std::unordered_map<std::string, sqlite3_stmt*> cache;

  ~Impl();
  /// Runs SQL without results (pragmas, DDL, BEGIN/COMMIT).
  Status Exec(const std::string& sql);
  /// The cached prepared statement for `sql` (prepared on first use).
  Result<sqlite3_stmt*> Prepare(const std::string& sql);
};

/// A borrowed, bound statement. Usage:
///   Stmt st(impl, "SELECT ... WHERE id = ?1");  RB_RETURN_IF_ERROR(st.status());
///   st.Bind(1, id);  while (st.Step()) { ... }  RB_RETURN_IF_ERROR(st.status());
class Stmt {
 public:
  Stmt(Database::Impl& impl, const std::string& sql);
  ~Stmt();
  Stmt(const Stmt&) = delete;
  Stmt& operator=(const Stmt&) = delete;

  const Status& status() const { return status_; }

  void Bind(int idx, std::int64_t v);
  void Bind(int idx, int v) { Bind(idx, static_cast<std::int64_t>(v)); }
  void Bind(int idx, double v);
  void Bind(int idx, std::string_view v);
  void Bind(int idx, const std::optional<double>& v);
  void Bind(int idx, const std::optional<std::int64_t>& v);
  void BindBlob(int idx, std::string_view bytes);
  void BindNull(int idx);

  /// Advances; true while a row is available. On error returns false and sets status().
  bool Step();
  /// Steps a statement that returns no rows.
  Status Run();

  std::int64_t Int(int col) const;
  double Double(int col) const;
  std::optional<double> OptDouble(int col) const;
  std::optional<std::int64_t> OptInt(int col) const;
  std::string Text(int col) const;
  std::string_view Blob(int col) const;

 private:
  sqlite3_stmt* st_ = nullptr;
  Database::Impl& impl_;
  Status status_;
  std::string what_;
};

}  // namespace rb::storage
