#include "storage/sqlite_util.h"

namespace rb::storage {

Status SqliteError(sqlite3* db, int rc, std::string_view what) {
  const std::string detail = db ? sqlite3_errmsg(db) : sqlite3_errstr(rc);
  std::string msg = std::string(what) + ": " + detail;
  switch (rc & 0xff) {
    case SQLITE_BUSY:
    case SQLITE_LOCKED:
      return Status::Busy(msg + " (another process kept the database locked)");
    case SQLITE_CONSTRAINT: return Status::InvalidArgument(msg);
    case SQLITE_CORRUPT:
    case SQLITE_NOTADB: return Status::Corruption(msg);
    case SQLITE_FULL: return Status::IOError(msg + " (disk or database size limit reached)");
    case SQLITE_READONLY: return Status::IOError(msg + " (database opened read-only)");
    default: return Status::IOError(msg);
  }
}

Database::Impl::~Impl() {
  for (auto& [sql, st] : cache) sqlite3_finalize(st);
  if (db) sqlite3_close_v2(db);
}

Status Database::Impl::Exec(const std::string& sql) {
  char* err = nullptr;
  const int rc = sqlite3_exec(db, sql.c_str(), nullptr, nullptr, &err);
  if (err) sqlite3_free(err);
  if (rc != SQLITE_OK) return SqliteError(db, rc, path);
  return Status::Ok();
}

Result<sqlite3_stmt*> Database::Impl::Prepare(const std::string& sql) {
  auto it = cache.find(sql);
  if (it != cache.end()) return it->second;
  sqlite3_stmt* st = nullptr;
  const int rc = sqlite3_prepare_v3(db, sql.c_str(), static_cast<int>(sql.size()),
                                    SQLITE_PREPARE_PERSISTENT, &st, nullptr);
  if (rc != SQLITE_OK) return SqliteError(db, rc, path);
  cache.emplace(sql, st);
  return st;
}

Stmt::Stmt(Database::Impl& impl, const std::string& sql) : impl_(impl), what_(impl.path) {
  Result<sqlite3_stmt*> st = impl.Prepare(sql);
  if (!st.ok()) {
    status_ = st.status();
    return;
  }
  st_ = *st;
}

Stmt::~Stmt() {
  if (st_) {
    sqlite3_reset(st_);
    sqlite3_clear_bindings(st_);
  }
}

void Stmt::Bind(int idx, std::int64_t v) {
  if (st_) sqlite3_bind_int64(st_, idx, v);
}
void Stmt::Bind(int idx, double v) {
  if (st_) sqlite3_bind_double(st_, idx, v);
}
void Stmt::Bind(int idx, std::string_view v) {
  if (st_) sqlite3_bind_text(st_, idx, v.data(), static_cast<int>(v.size()), SQLITE_TRANSIENT);
}
void Stmt::Bind(int idx, const std::optional<double>& v) {
  if (v) Bind(idx, *v); else BindNull(idx);
}
void Stmt::Bind(int idx, const std::optional<std::int64_t>& v) {
  if (v) Bind(idx, *v); else BindNull(idx);
}
void Stmt::BindBlob(int idx, std::string_view bytes) {
  if (st_) {
    sqlite3_bind_blob64(st_, idx, bytes.data(), bytes.size(), SQLITE_TRANSIENT);
  }
}
void Stmt::BindNull(int idx) {
  if (st_) sqlite3_bind_null(st_, idx);
}

bool Stmt::Step() {
  if (!st_ || !status_.ok()) return false;
  const int rc = sqlite3_step(st_);
  if (rc == SQLITE_ROW) return true;
  if (rc != SQLITE_DONE) status_ = SqliteError(impl_.db, rc, what_);
  return false;
}

Status Stmt::Run() {
  while (Step()) {
  }
  return status_;
}

std::int64_t Stmt::Int(int col) const { return sqlite3_column_int64(st_, col); }
double Stmt::Double(int col) const { return sqlite3_column_double(st_, col); }
std::optional<double> Stmt::OptDouble(int col) const {
  if (sqlite3_column_type(st_, col) == SQLITE_NULL) return std::nullopt;
  return sqlite3_column_double(st_, col);
}
std::optional<std::int64_t> Stmt::OptInt(int col) const {
  if (sqlite3_column_type(st_, col) == SQLITE_NULL) return std::nullopt;
  return sqlite3_column_int64(st_, col);
}
std::string Stmt::Text(int col) const {
  const unsigned char* p = sqlite3_column_text(st_, col);
  return p ? std::string(reinterpret_cast<const char*>(p),
                         static_cast<size_t>(sqlite3_column_bytes(st_, col)))
           : std::string();
}
std::string_view Stmt::Blob(int col) const {
  const void* p = sqlite3_column_blob(st_, col);
  return p ? std::string_view(static_cast<const char*>(p),
                              static_cast<size_t>(sqlite3_column_bytes(st_, col)))
           : std::string_view();
}

}  // namespace rb::storage
