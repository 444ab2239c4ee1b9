// LampWorld: the invented scenario behind fanfold's demo data — the street
// lamp controllers of a made-up city, each reporting events (heartbeats,
// switching, dimming, faults, reboots). It fixes the lamps (id, district,
// firmware channel, upgrade time, flakiness) from the seed and produces the
// events of one hourly shard as plain structs; ShardText turns them into
// bytes. Deterministic by (seed, shard index); immutable after construction,
// so one world may serve several generating threads.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace fanfold::gen {

enum class EventKind : uint8_t { kHeartbeat, kSwitchOn, kSwitchOff, kDim, kFault, kReboot };
// How the record carries its instant: ISO 8601 with 'Z', with an offset, or
// as epoch milliseconds in a separate "ts_ms" field.
enum class TimeStyle : uint8_t { kUtc, kPlusOne, kMinusThreeThirty, kEpochMs };
enum class PowerStyle : uint8_t { kNumber, kMissing, kNull, kNumericText, kJunkText };
enum class FaultStyle : uint8_t { kNull, kMissing, kCode };

std::string_view EventName(EventKind k);

inline constexpr uint64_t kNoTag = UINT64_MAX;

// One line of a shard. Numbers are kept as scaled integers so that their text
// never depends on floating-point formatting.
struct LampEvent {
  int64_t t_ms = 0;             // the instant, epoch milliseconds (UTC)
  TimeStyle time_style = TimeStyle::kUtc;
  uint32_t lamp = 0;            // index into the world's lamps
  EventKind kind = EventKind::kHeartbeat;
  PowerStyle power_style = PowerStyle::kNumber;
  int32_t power_tenths = 0;     // watts * 10
  bool has_latency = true;
  int32_t latency_hundredths = 0;  // milliseconds * 100
  uint8_t firmware = 0;         // index into FirmwareName()
  uint8_t reading_count = 2;    // 0 (readings: []), 1, 2; 3 = field absent
  int32_t temp_tenths = 0;      // readings[0]: degrees C * 10
  int32_t humidity = 0;         // readings[1]: percent
  FaultStyle fault_style = FaultStyle::kNull;
  uint8_t fault_code = 0;       // index into FaultName() when kCode
  uint64_t tag = kNoTag;        // the road-user tag the lamp's sensor saw (--tags)
  bool malformed = false;       // this line is written broken instead
  uint64_t corruption = 0;      // random bits choosing how it is broken
};

class LampWorld {
 public:
  // start_ms: the first shard's hour (epoch ms, UTC). lamps in [1, 100000].
  LampWorld(uint64_t seed, uint32_t lamps, int64_t start_ms, double bad_rate);

  // Lines (well-formed + malformed) that shard `index` holds when the mean
  // is `mean_lines` and sizes vary by +-spread (fraction of the mean).
  uint64_t LinesFor(uint32_t index, uint64_t mean_lines, double spread) const;

  // The events of shard `index` (the hour start_ms + index h), in time order
  // with strictly increasing instants while lines <= 3.6 million.
  void Generate(uint32_t index, uint64_t lines, std::vector<LampEvent>* out) const;

  // With n > 0, every event carries a tag drawn uniformly from n values
  // (the high-cardinality key of the cardinality benchmark), from a hash
  // of (seed, shard, line) apart from the other fields' draws, so they
  // stay what they are without tags.
  void set_tags(uint64_t n) { tags_ = n; }

  int64_t HourStart(uint32_t index) const { return start_ms_ + int64_t{index} * 3'600'000; }
  const std::string& LampId(uint32_t lamp) const { return lamps_[lamp].id; }
  std::string_view District(uint32_t lamp) const;
  std::string_view Channel(uint32_t lamp) const;

  static std::string_view FirmwareName(uint8_t i);
  static std::string_view FaultName(uint8_t i);

 private:
  struct Lamp {
    std::string id;         // "L-00421"
    uint8_t district = 0;
    bool beta = false;      // on the beta firmware channel
    bool flaky = false;     // faults ten times as often
    uint8_t initial_fw = 0;
    int64_t upgrade_ms = 0; // when it moves to the new firmware
  };
  void FillEvent(const Lamp& lamp, int local_hour, class GenRng& rng, LampEvent* e) const;

  uint64_t seed_;
  int64_t start_ms_;
  double bad_rate_;
  uint64_t tags_ = 0;
  std::vector<Lamp> lamps_;
};

}  // namespace fanfold::gen
