// rotorbench tests: an SQLite VFS shim that makes the Nth write, sync or truncate fail.
//
// Wraps the platform's default VFS and registers itself as the default, so production code
// (storage/) runs unchanged on top of it. Test-only; not thread-safe.
#pragma once

namespace rb::testing {

enum class FaultKind { kWrite, kSync, kTruncate, kAny };

/// Installs the shim as SQLite's default VFS (idempotent) and clears any armed fault.
void InstallFaultVfs();
/// Removes the shim; the platform VFS becomes the default again.
void UninstallFaultVfs();

/// Arms a fault: the n-th operation of `kind` (1-based, counted from now) fails with an
/// I/O error, and so does every later one until Disarm() (a failed disk stays failed).
void ArmFault(FaultKind kind, int n);
void DisarmFault();
/// Operations of `kind` counted since the last Arm/Reset.
int FaultOpsCounted(FaultKind kind);
void ResetFaultCounters();
bool FaultFired();

}  // namespace rb::testing
