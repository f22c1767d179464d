#include "acquire/decoder.h"

#include <cstring>

namespace rb::acquire {

std::int64_t TimeUnwrapper::Unwrap(std::uint32_t t) {
  if (!init_) {
    init_ = true;
    ref_ = t;
    return ref_;
  }
  const std::int32_t d = static_cast<std::int32_t>(t - static_cast<std::uint32_t>(ref_));
  const std::int64_t v = ref_ + d;
  if (v > ref_) {
    if ((v >> 32) != (ref_ >> 32)) ++wraps_;
    ref_ = v;
  }
  return v;
}

FrameDecoder::FrameDecoder(Handler handler) : handler_(std::move(handler)) {
  payload_.resize(proto::kMaxPayload);
  pending_.reserve(proto::kMaxEncoded);
}

void FrameDecoder::Reset() {
  pending_.clear();
  skipping_ = false;
  have_seq_ = false;
  clock_.Reset();
}

void FrameDecoder::Reject(std::size_t bytes, const std::string& why) {
  c_.garbage_bytes += bytes;
  last_error_ = "frame " + std::to_string(frame_no_) + ": " + why;
}

void FrameDecoder::Feed(std::span<const std::uint8_t> bytes) {
  c_.bytes += bytes.size();
  const std::uint8_t* p = bytes.data();
  const std::uint8_t* end = p + bytes.size();
  while (p < end) {
    const auto* d = static_cast<const std::uint8_t*>(std::memchr(p, proto::kDelimiter,
                                                                 static_cast<std::size_t>(end - p)));
    const std::uint8_t* stop = d ? d : end;
    const std::size_t n = static_cast<std::size_t>(stop - p);
    if (skipping_) {
      c_.garbage_bytes += n;
    } else if (pending_.size() + n > proto::kMaxEncoded) {
      ++frame_no_;
      ++c_.malformed;
      Reject(pending_.size() + n, "no delimiter within " + std::to_string(proto::kMaxEncoded) +
                                      " bytes; expected a frame of at most that size");
      pending_.clear();
      skipping_ = true;
    } else if (d && pending_.empty()) {
      if (n > 0) EndFrame({p, n});  // the common case: decode straight from the input
    } else {
      pending_.insert(pending_.end(), p, stop);
      if (d) {
        EndFrame(pending_);
        pending_.clear();
      }
    }
    if (!d) break;
    skipping_ = false;
    p = d + 1;
  }
}

void FrameDecoder::EndFrame(std::span<const std::uint8_t> encoded) {
  ++frame_no_;
  const long n = CobsDecode(encoded, payload_);
  if (n < 0) {
    // A code byte pointing past the delimiter means bytes went missing.
    ++c_.truncated;
    Reject(encoded.size(), "byte stuffing runs past the delimiter; expected a complete frame");
    return;
  }
  PayloadError why = PayloadError::kNone;
  Status s = DecodePayloadInto({payload_.data(), static_cast<std::size_t>(n)}, &frame_, &why);
  if (!s.ok()) {
    switch (why) {
      case PayloadError::kTooShort: ++c_.truncated; break;
      case PayloadError::kBadCrc: ++c_.bad_crc; break;
      case PayloadError::kBadVersion: ++c_.bad_version; break;
      case PayloadError::kUnknownType: ++c_.unknown_type; break;
      default: ++c_.malformed; break;
    }
    Reject(encoded.size(), s.message());
    return;
  }
  ++c_.frames;
  const std::uint16_t seq = frame_.header.seq;
  if (have_seq_ && seq != next_seq_) {
    const std::uint16_t gap = static_cast<std::uint16_t>(seq - next_seq_);
    if (gap < 0x8000) {
      ++c_.seq_gaps;
      c_.frames_lost += gap;
    } else {
      ++c_.seq_resets;
    }
  }
  have_seq_ = true;
  next_seq_ = static_cast<std::uint16_t>(seq + 1);
  const std::int64_t t = clock_.Unwrap(frame_.header.time_us);
  handler_(frame_, t);
}

}  // namespace rb::acquire
