// rotorbench base: wall-clock time as text, for records people read.
//
// UTC timestamps are stored as ISO 8601 text with milliseconds ("2026-12-01T22:40:12.345Z").
// Thread-safe.
#pragma once

#include <chrono>
#include <string>

namespace rb {

/// Formats a system_clock time point as ISO 8601 UTC with milliseconds.
std::string FormatUtc(std::chrono::system_clock::time_point tp);

/// The current time, formatted by FormatUtc.
std::string UtcNowIso();

/// A compact form for file names: 20261201T224012Z.
std::string UtcStampForFileName(std::chrono::system_clock::time_point tp);

}  // namespace rb
