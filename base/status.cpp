#include "base/status.h"

namespace rb {

const char* CodeName(Code code) {
  switch (code) {
    case Code::kOk: return "ok";
    case Code::kInvalidArgument: return "invalid argument";
    case Code::kNotFound: return "not found";
    case Code::kIOError: return "I/O error";
    case Code::kCorruption: return "corruption";
    case Code::kBusy: return "busy";
    case Code::kUnsupported: return "unsupported";
    case Code::kInterrupted: return "interrupted";
    case Code::kFailedPrecondition: return "failed precondition";
  }
  return "unknown";
}

}  // namespace rb
