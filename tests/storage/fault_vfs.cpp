#include "tests/storage/fault_vfs.h"

#include <sqlite3.h>

#include <cstring>

namespace rb::testing {
namespace {

struct State {
  sqlite3_vfs* base = nullptr;
  sqlite3_vfs shim{};
  bool installed = false;
  FaultKind kind = FaultKind::kAny;
  int fail_at = 0;  // 0 = disarmed
  bool fired = false;
  int writes = 0, syncs = 0, truncates = 0;
} g;

struct ShimFile {
  sqlite3_file base;       // must be first: SQLite sees a sqlite3_file*
  sqlite3_file* real;      // the wrapped file, allocated right after this struct
};

/// Counts an operation; true if it must fail. Once a fault fires, every later write,
/// sync and truncate fails too, as on a disk that has gone away.
bool Hit(FaultKind k) {
  int* counter = k == FaultKind::kWrite ? &g.writes : k == FaultKind::kSync ? &g.syncs
                                                                            : &g.truncates;
  ++*counter;
  if (g.fail_at <= 0) return false;
  if (g.fired) return true;
  if (g.kind != FaultKind::kAny && g.kind != k) return false;
  const int seen = g.kind == FaultKind::kAny ? g.writes + g.syncs + g.truncates : *counter;
  if (seen >= g.fail_at) {
    g.fired = true;
    return true;
  }
  return false;
}

ShimFile* F(sqlite3_file* f) { return reinterpret_cast<ShimFile*>(f); }

int Close(sqlite3_file* f) {
  int rc = F(f)->real->pMethods ? F(f)->real->pMethods->xClose(F(f)->real) : SQLITE_OK;
  return rc;
}
int Read(sqlite3_file* f, void* p, int n, sqlite3_int64 off) {
  return F(f)->real->pMethods->xRead(F(f)->real, p, n, off);
}
int Write(sqlite3_file* f, const void* p, int n, sqlite3_int64 off) {
  if (Hit(FaultKind::kWrite)) return SQLITE_IOERR_WRITE;
  return F(f)->real->pMethods->xWrite(F(f)->real, p, n, off);
}
int Truncate(sqlite3_file* f, sqlite3_int64 size) {
  if (Hit(FaultKind::kTruncate)) return SQLITE_IOERR_TRUNCATE;
  return F(f)->real->pMethods->xTruncate(F(f)->real, size);
}
int Sync(sqlite3_file* f, int flags) {
  if (Hit(FaultKind::kSync)) return SQLITE_IOERR_FSYNC;
  return F(f)->real->pMethods->xSync(F(f)->real, flags);
}
int FileSize(sqlite3_file* f, sqlite3_int64* size) {
  return F(f)->real->pMethods->xFileSize(F(f)->real, size);
}
int Lock(sqlite3_file* f, int l) { return F(f)->real->pMethods->xLock(F(f)->real, l); }
int Unlock(sqlite3_file* f, int l) { return F(f)->real->pMethods->xUnlock(F(f)->real, l); }
int CheckReservedLock(sqlite3_file* f, int* out) {
  return F(f)->real->pMethods->xCheckReservedLock(F(f)->real, out);
}
int FileControl(sqlite3_file* f, int op, void* arg) {
  return F(f)->real->pMethods->xFileControl(F(f)->real, op, arg);
}
int SectorSize(sqlite3_file* f) { return F(f)->real->pMethods->xSectorSize(F(f)->real); }
int DeviceCharacteristics(sqlite3_file* f) {
  return F(f)->real->pMethods->xDeviceCharacteristics(F(f)->real);
}
int ShmMap(sqlite3_file* f, int pg, int sz, int extend, void volatile** pp) {
  return F(f)->real->pMethods->xShmMap(F(f)->real, pg, sz, extend, pp);
}
int ShmLock(sqlite3_file* f, int offset, int n, int flags) {
  return F(f)->real->pMethods->xShmLock(F(f)->real, offset, n, flags);
}
void ShmBarrier(sqlite3_file* f) { F(f)->real->pMethods->xShmBarrier(F(f)->real); }
int ShmUnmap(sqlite3_file* f, int del) { return F(f)->real->pMethods->xShmUnmap(F(f)->real, del); }
int Fetch(sqlite3_file* f, sqlite3_int64 off, int amt, void** pp) {
  return F(f)->real->pMethods->xFetch(F(f)->real, off, amt, pp);
}
int Unfetch(sqlite3_file* f, sqlite3_int64 off, void* p) {
  return F(f)->real->pMethods->xUnfetch(F(f)->real, off, p);
}

const sqlite3_io_methods kMethods = {
    3,        Close,       Read,           Write,    Truncate,  Sync,
    FileSize, Lock,        Unlock,         CheckReservedLock,   FileControl,
    SectorSize, DeviceCharacteristics,     ShmMap,   ShmLock,   ShmBarrier,
    ShmUnmap, Fetch,       Unfetch};

int Open(sqlite3_vfs*, sqlite3_filename name, sqlite3_file* file, int flags, int* out_flags) {
  ShimFile* s = F(file);
  s->real = reinterpret_cast<sqlite3_file*>(s + 1);
  std::memset(s->real, 0, static_cast<size_t>(g.base->szOsFile));
  const int rc = g.base->xOpen(g.base, name, s->real, flags, out_flags);
  s->base.pMethods = s->real->pMethods ? &kMethods : nullptr;
  return rc;
}

int Delete(sqlite3_vfs*, const char* name, int sync) { return g.base->xDelete(g.base, name, sync); }
int Access(sqlite3_vfs*, const char* name, int flags, int* out) {
  return g.base->xAccess(g.base, name, flags, out);
}
int FullPathname(sqlite3_vfs*, const char* name, int n, char* out) {
  return g.base->xFullPathname(g.base, name, n, out);
}
void* DlOpen(sqlite3_vfs*, const char* p) { return g.base->xDlOpen(g.base, p); }
void DlError(sqlite3_vfs*, int n, char* msg) { g.base->xDlError(g.base, n, msg); }
void (*DlSym(sqlite3_vfs*, void* h, const char* s))(void) { return g.base->xDlSym(g.base, h, s); }
void DlClose(sqlite3_vfs*, void* h) { g.base->xDlClose(g.base, h); }
int Randomness(sqlite3_vfs*, int n, char* out) { return g.base->xRandomness(g.base, n, out); }
int Sleep(sqlite3_vfs*, int us) { return g.base->xSleep(g.base, us); }
int CurrentTime(sqlite3_vfs*, double* t) { return g.base->xCurrentTime(g.base, t); }
int GetLastError(sqlite3_vfs*, int n, char* msg) {
  return g.base->xGetLastError ? g.base->xGetLastError(g.base, n, msg) : 0;
}
int CurrentTimeInt64(sqlite3_vfs*, sqlite3_int64* t) {
  return g.base->xCurrentTimeInt64(g.base, t);
}

}  // namespace

void InstallFaultVfs() {
  if (!g.installed) {
    g.base = sqlite3_vfs_find(nullptr);
    g.shim = *g.base;
    g.shim.iVersion = 2;
    g.shim.szOsFile = static_cast<int>(sizeof(ShimFile)) + g.base->szOsFile;
    g.shim.zName = "rb-fault";
    g.shim.pNext = nullptr;
    g.shim.xOpen = Open;
    g.shim.xDelete = Delete;
    g.shim.xAccess = Access;
    g.shim.xFullPathname = FullPathname;
    g.shim.xDlOpen = DlOpen;
    g.shim.xDlError = DlError;
    g.shim.xDlSym = DlSym;
    g.shim.xDlClose = DlClose;
    g.shim.xRandomness = Randomness;
    g.shim.xSleep = Sleep;
    g.shim.xCurrentTime = CurrentTime;
    g.shim.xGetLastError = GetLastError;
    g.shim.xCurrentTimeInt64 = CurrentTimeInt64;
    sqlite3_vfs_register(&g.shim, 1);
    g.installed = true;
  }
  DisarmFault();
  ResetFaultCounters();
}

void UninstallFaultVfs() {
  if (!g.installed) return;
  sqlite3_vfs_unregister(&g.shim);
  sqlite3_vfs_register(g.base, 1);
  g.installed = false;
}

void ArmFault(FaultKind kind, int n) {
  ResetFaultCounters();
  g.kind = kind;
  g.fail_at = n;
  g.fired = false;
}

void DisarmFault() {
  g.fail_at = 0;
  g.fired = false;
}

int FaultOpsCounted(FaultKind kind) {
  switch (kind) {
    case FaultKind::kWrite: return g.writes;
    case FaultKind::kSync: return g.syncs;
    case FaultKind::kTruncate: return g.truncates;
    case FaultKind::kAny: return g.writes + g.syncs + g.truncates;
  }
  return 0;
}

void ResetFaultCounters() { g.writes = g.syncs = g.truncates = 0; }

bool FaultFired() { return g.fired; }

}  // namespace rb::testing
