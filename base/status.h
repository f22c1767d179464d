// rotorbench base: the one error type, used as a value by every module.
//
// A Status is a code plus a readable one-line message that already names the place
// (file:line, frame N, argument) and what was expected. Result<T> carries either a
// value or a non-ok Status. Only cli/ turns a Status into printed text and an exit code.
// Thread-safety: plain values; safe to copy between threads.
#pragma once

#include <cassert>
#include <string>
#include <utility>
#include <variant>

namespace rb {

/// Broad error classes; code branches on these, people read the message.
/// The numeric values are not persisted anywhere and may be renumbered.
enum class Code {
  kOk = 0,
  kInvalidArgument,     ///< bad user input: a file, an option, a value
  kNotFound,            ///< a named thing (motor, run, fit, file) does not exist
  kIOError,             ///< the operating system refused a read, write or open
  kCorruption,          ///< stored or received data is not what it claims to be
  kBusy,                ///< the database stayed locked beyond the busy timeout
  kUnsupported,         ///< valid request this build or this data cannot serve
  kInterrupted,         ///< stopped by a signal or the user; partial work kept
  kFailedPrecondition,  ///< the data cannot support the request (e.g. nothing identifiable)
};

const char* CodeName(Code code);

class [[nodiscard]] Status {
 public:
  Status() = default;  // ok
  Status(Code code, std::string message) : code_(code), message_(std::move(message)) {}

  static Status Ok() { return Status(); }
  static Status InvalidArgument(std::string m) { return {Code::kInvalidArgument, std::move(m)}; }
  static Status NotFound(std::string m) { return {Code::kNotFound, std::move(m)}; }
  static Status IOError(std::string m) { return {Code::kIOError, std::move(m)}; }
  static Status Corruption(std::string m) { return {Code::kCorruption, std::move(m)}; }
  static Status Busy(std::string m) { return {Code::kBusy, std::move(m)}; }
  static Status Unsupported(std::string m) { return {Code::kUnsupported, std::move(m)}; }
  static Status Interrupted(std::string m) { return {Code::kInterrupted, std::move(m)}; }
  static Status FailedPrecondition(std::string m) {
    return {Code::kFailedPrecondition, std::move(m)};
  }

  bool ok() const { return code_ == Code::kOk; }
  Code code() const { return code_; }
  const std::string& message() const { return message_; }

  /// Returns a copy whose message is "prefix: message" (adds context on the way up).
  Status WithPrefix(const std::string& prefix) const {
    if (ok()) return *this;
    return Status(code_, prefix + ": " + message_);
  }

 private:
  Code code_ = Code::kOk;
  std::string message_;
};

/// Either a T or a non-ok Status. Access the value only after checking ok().
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : v_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Status status) : v_(std::move(status)) {  // NOLINT: implicit by design
    assert(!std::get<Status>(v_).ok() && "Result built from an ok Status has no value");
  }

  bool ok() const { return std::holds_alternative<T>(v_); }
  const Status& status() const {
    static const Status kOk;
    return ok() ? kOk : std::get<Status>(v_);
  }
  T& value() & { return std::get<T>(v_); }
  const T& value() const& { return std::get<T>(v_); }
  T&& value() && { return std::get<T>(std::move(v_)); }
  T* operator->() { return &std::get<T>(v_); }
  const T* operator->() const { return &std::get<T>(v_); }
  T& operator*() & { return std::get<T>(v_); }
  const T& operator*() const& { return std::get<T>(v_); }

 private:
  std::variant<T, Status> v_;
};

}  // namespace rb

/// Returns early from the enclosing function when `expr` (a Status) is not ok.
#define RB_RETURN_IF_ERROR(expr)              \
  do {                                        \
    ::rb::Status rb_status_tmp_ = (expr);     \
    if (!rb_status_tmp_.ok()) return rb_status_tmp_; \
  } while (0)
