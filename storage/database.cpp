// Opening, creating and migrating the database; transactions; maintenance.
#include <sys/stat.h>

#include <algorithm>
#include <chrono>
#include <cstdio>

#include "base/time_util.h"
#include "storage/schema.h"
#include "storage/sqlite_util.h"
#include "storage/storage.h"

namespace rb::storage {
namespace {

bool FileExists(const std::string& path) {
  struct stat st {};
  return ::stat(path.c_str(), &st) == 0;
}

Result<std::int64_t> PragmaInt(Database::Impl& impl, const char* pragma) {
  sqlite3_stmt* st = nullptr;
  const std::string sql = std::string("PRAGMA ") + pragma;
  int rc = sqlite3_prepare_v2(impl.db, sql.c_str(), -1, &st, nullptr);
  if (rc != SQLITE_OK) {
    Status s = SqliteError(impl.db, rc, impl.path);
    sqlite3_finalize(st);
    return s;
  }
  rc = sqlite3_step(st);
  std::int64_t v = rc == SQLITE_ROW ? sqlite3_column_int64(st, 0) : 0;
  if (rc != SQLITE_ROW && rc != SQLITE_DONE) {
    Status s = SqliteError(impl.db, rc, impl.path);
    sqlite3_finalize(st);
    return s;
  }
  sqlite3_finalize(st);
  return v;
}

Status NotOurs(const std::string& path, const std::string& why) {
  return Status::InvalidArgument(path + ": not a rotorbench database (" + why +
                                 "); expected a file made by rotorbench, or a new path");
}

Status BackupWith(sqlite3* src, const std::string& dest_path) {
  sqlite3* dest = nullptr;
  int rc = sqlite3_open_v2(dest_path.c_str(), &dest, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE,
                           nullptr);
  if (rc != SQLITE_OK) {
    Status s = SqliteError(dest, rc, "backup to " + dest_path);
    sqlite3_close_v2(dest);
    return s;
  }
  sqlite3_backup* b = sqlite3_backup_init(dest, "main", src, "main");
  if (!b) {
    Status s = SqliteError(dest, sqlite3_errcode(dest), "backup to " + dest_path);
    sqlite3_close_v2(dest);
    return s;
  }
  rc = sqlite3_backup_step(b, -1);
  sqlite3_backup_finish(b);
  Status s = rc == SQLITE_DONE ? Status::Ok() : SqliteError(dest, rc, "backup to " + dest_path);
  sqlite3_close_v2(dest);
  return s;
}

}  // namespace

std::string_view RunStatusName(RunStatus s) {
  switch (s) {
    case RunStatus::kRecording: return "recording";
    case RunStatus::kComplete: return "complete";
    case RunStatus::kInterrupted: return "interrupted";
  }
  return "?";
}

Database::Database(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
Database::Database(Database&&) noexcept = default;
Database& Database::operator=(Database&&) noexcept = default;
Database::~Database() = default;

const std::string& Database::path() const { return impl_->path; }
int Database::schema_version() const { return impl_->version; }
const std::string& Database::backup_path() const { return impl_->backup_path; }

/// Caps the file at about `bytes` (this connection only): a write beyond fails like a full
/// disk (SQLITE_FULL).
[[gnu::noinline]] static Status LimitSize(Database::Impl& impl, std::int64_t bytes) {
  Result<std::int64_t> page = PragmaInt(impl, "page_size");
  if (!page.ok()) return page.status();
  const std::int64_t pages = std::max<std::int64_t>(1, bytes / std::max<std::int64_t>(1, *page));
  return impl.Exec("PRAGMA max_page_count=" + std::to_string(pages));
}

Result<Database> Database::Open(const std::string& path, const OpenOptions& options) {
  const bool existed = FileExists(path);
  if (!existed && (!options.create_if_missing || options.read_only)) {
    return Status::NotFound(path + ": no such database; expected an existing rotorbench "
                            "database (give --db FILE, or add a motor to create one)");
  }
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  const int flags = options.read_only ? SQLITE_OPEN_READONLY
                                      : (SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
  int rc = sqlite3_open_v2(path.c_str(), &impl->db, flags | SQLITE_OPEN_NOMUTEX, nullptr);
  if (rc != SQLITE_OK) return SqliteError(impl->db, rc, path + ": cannot open");
  sqlite3_extended_result_codes(impl->db, 1);
  sqlite3_busy_timeout(impl->db, options.busy_timeout_ms);

  // Reading the header proves (or disproves) that this is an SQLite file at all.
  Result<std::int64_t> app_id = PragmaInt(*impl, "application_id");
  if (!app_id.ok()) {
    if (app_id.status().code() == Code::kCorruption) return NotOurs(path, "not an SQLite file");
    return app_id.status();
  }
  Result<std::int64_t> version = PragmaInt(*impl, "user_version");
  if (!version.ok()) return version.status();
  Result<std::int64_t> tables = 0;
  {
    Stmt st(*impl, "SELECT count(*) FROM sqlite_master");
    if (!st.status().ok()) return st.status();
    if (st.Step()) tables = st.Int(0);
    if (!st.status().ok()) return st.status();
  }
  if (*app_id != kApplicationId) {
    if (*app_id != 0 || *tables > 0) {
      return NotOurs(path, *app_id != 0 ? "another program's application id"
                                        : "it holds tables rotorbench did not create");
    }
    if (options.read_only) return NotOurs(path, "the file is empty");
    *version = 0;  // a new, empty file
  }
  if (*version > kSchemaVersion) {
    return Status::Unsupported(path + ": schema version " + std::to_string(*version) +
                               " is newer than this rotorbench understands (" +
                               std::to_string(kSchemaVersion) + "); use a newer rotorbench");
  }
  impl->version = static_cast<int>(*version);

  if (!options.read_only) {
    RB_RETURN_IF_ERROR(impl->Exec("PRAGMA journal_mode=WAL"));
    RB_RETURN_IF_ERROR(impl->Exec(options.synchronous_full ? "PRAGMA synchronous=FULL"
                                                           : "PRAGMA synchronous=NORMAL"));
  }
  RB_RETURN_IF_ERROR(impl->Exec("PRAGMA foreign_keys=ON"));
  if (options.max_size_bytes > 0 && !options.read_only) RB_RETURN_IF_ERROR(LimitSize(*impl, options.max_size_bytes));

  const int target = options.target_version > 0 ? options.target_version : kSchemaVersion;
  if (impl->version < target) {
    if (options.read_only) {
      return Status::FailedPrecondition(
          path + ": schema version " + std::to_string(impl->version) + " needs migrating to " +
          std::to_string(target) + "; open it once with a write command");
    }
    if (impl->version > 0) {  // never migrate existing data without a copy
      const std::string bak = path + ".bak-v" + std::to_string(impl->version) + "-" +
                              UtcStampForFileName(std::chrono::system_clock::now());
      RB_RETURN_IF_ERROR(BackupWith(impl->db, bak).WithPrefix("before migrating " + path));
      impl->backup_path = bak;
    }
    const auto& migrations = Migrations();
    for (int v = impl->version; v < target; ++v) {
      RB_RETURN_IF_ERROR(impl->Exec("BEGIN IMMEDIATE"));
      std::string sql(migrations[static_cast<size_t>(v)]);
      if (v == 0) sql += "\nPRAGMA application_id=" + std::to_string(kApplicationId) + ";";
      sql += "\nPRAGMA user_version=" + std::to_string(v + 1) + ";";
      Status s = impl->Exec(sql);
      if (!s.ok()) {
        impl->Exec("ROLLBACK").ok();
        return s.WithPrefix("migrating to schema version " + std::to_string(v + 1));
      }
      RB_RETURN_IF_ERROR(impl->Exec("COMMIT"));
      impl->version = v + 1;
    }
  }
  return Database(std::move(impl));
}

Status Database::Begin() {
  if (impl_->in_txn) return Status::FailedPrecondition("transaction already open");
  RB_RETURN_IF_ERROR(impl_->Exec("BEGIN IMMEDIATE"));
  impl_->in_txn = true;
  return Status::Ok();
}

Status Database::Commit() {
  if (!impl_->in_txn) return Status::FailedPrecondition("no transaction open");
  Status s = impl_->Exec("COMMIT");
  if (s.ok()) impl_->in_txn = false;
  return s;
}

Status Database::BeginRead() {
  if (impl_->in_txn) return Status::FailedPrecondition("transaction already open");
  RB_RETURN_IF_ERROR(impl_->Exec("BEGIN DEFERRED"));
  impl_->in_txn = true;
  return Status::Ok();
}

Status Database::EndRead() { return Commit(); }

Status Database::Rollback() {
  if (!impl_->in_txn) return Status::Ok();
  impl_->in_txn = false;
  if (sqlite3_get_autocommit(impl_->db)) return Status::Ok();  // SQLite already rolled back
  return impl_->Exec("ROLLBACK");
}

Status Database::IntegrityCheck() {
  Stmt st(*impl_, "PRAGMA integrity_check");
  std::string first;
  if (st.Step()) first = st.Text(0);
  RB_RETURN_IF_ERROR(st.status());
  if (first != "ok") return Status::Corruption(impl_->path + ": integrity_check: " + first);
  Stmt fk(*impl_, "PRAGMA foreign_key_check");
  if (fk.Step()) {
    return Status::Corruption(impl_->path + ": foreign_key_check: a row in " + fk.Text(0) +
                              " refers to a missing parent");
  }
  return fk.status();
}

Status Database::BackupTo(const std::string& dest) { return BackupWith(impl_->db, dest); }

}  // namespace rb::storage
