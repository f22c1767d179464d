// Fuzz target: the rig link decoder (host side) and the simulated firmware's command
// handling (device side). Any byte stream, split anywhere, must never crash, never hand on
// a frame that is not valid (re-encoding it gives back a frame that decodes the same), and
// keep its counters consistent (garbage never exceeds the bytes fed).
#include <cstdint>
#include <cstdlib>
#include <vector>

#include "acquire/decoder.h"
#include "acquire/sim_firmware.h"
#include "model/demo.h"

using namespace rb::acquire;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::size_t frames = 0;
  FrameDecoder dec([&](const Frame& f, std::int64_t) {
    ++frames;
    std::vector<std::uint8_t> again;
    EncodeFrame(f.header.seq, f.header.time_us, f.msg, &again);
    std::vector<std::uint8_t> payload(proto::kMaxPayload);
    const long n = CobsDecode({again.data(), again.size() - 1}, payload);
    if (n < 0 || !DecodePayload({payload.data(), static_cast<std::size_t>(n)}).ok()) std::abort();
  });
  // Split the input at a position taken from its first byte: splits must not matter.
  const std::size_t cut = size ? data[0] % (size + 1) : 0;
  dec.Feed({data, cut});
  dec.Feed({data + cut, size - cut});
  const DecoderCounters& c = dec.counters();
  if (c.frames != frames || c.garbage_bytes > c.bytes || c.bytes != size) std::abort();

  // The device side: the same bytes as host commands to the simulated rig.
  SimRigOptions rig;
  rig.bench = rb::model::DemoBench(1);
  SimFirmware fw(rig);
  fw.Receive({data, size});
  fw.AdvanceTo(0.02);
  fw.TakeOutput();
  return 0;
}
