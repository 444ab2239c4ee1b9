#include "demo_data/gen/lamp_world.h"

#include <array>
#include <cstdio>

#include "demo_data/gen/gen_rng.h"

namespace fanfold::gen {
namespace {

// Invented district names. Two carry a comma or double quotes so that the
// CSV writer (and every CSV reader) has to quote them.
struct DistrictDef {
  std::string_view name;
  uint32_t weight;  // share of the lamps
};
constexpr std::array<DistrictDef, 10> kDistricts = {{
    {"Quillmoor", 16},
    {"Brassfen", 14},
    {"Ostergloam", 12},
    {"Fennick Row", 11},
    {"Marrowick", 10},
    {"Tansel Reach", 9},
    {"Vell, Upper", 8},
    {"Drummet \"Old Quay\"", 8},
    {"Sorrowvane", 7},
    {"Yarlow Stacks", 5},
}};

// 0, 1: the old stable releases; 2: the stable upgrade; 3: the beta upgrade.
constexpr std::array<std::string_view, 4> kFirmware = {"4.1.3", "4.1.7", "4.2.0", "4.3.0-rc1"};
constexpr std::array<std::string_view, 5> kFaults = {"E-OVERTEMP", "E-DRIVER", "E-LINK",
                                                     "E-VOLTAGE", "E-LENS"};
constexpr std::array<double, 5> kFaultCumulative = {0.30, 0.55, 0.75, 0.92, 1.0};

// Quantiles of a lognormal latency (median 11 ms, sigma 0.55) at u = 0,
// 1/32, ..., 1 (the ends at p = 0.0005 and 0.9995), interpolated linearly:
// a skewed shape without calling exp/log, whose last bits differ between
// math libraries.
constexpr std::array<double, 33> kLatencyTable = {
    1.801,  3.949,  4.731,  5.328,  5.843,  6.312,  6.753,  7.177,  7.591,  7.999,  8.407,
    8.817,  9.232,  9.655,  10.088, 10.536, 11.000, 11.485, 11.994, 12.533, 13.107, 13.724,
    14.393, 15.126, 15.941, 16.860, 17.918, 19.171, 20.709, 22.710, 25.576, 30.643, 67.201};

int32_t Round(double x) { return static_cast<int32_t>(x < 0 ? x - 0.5 : x + 0.5); }

int32_t UniformTenths(GenRng& rng, double lo, double hi) { return Round((lo + (hi - lo) * rng.Uniform()) * 10); }

double Latency(GenRng& rng) {
  const double u = rng.Uniform() * 32;
  const int i = static_cast<int>(u);
  double ms = kLatencyTable[i] + (kLatencyTable[i + 1] - kLatencyTable[i]) * (u - i);
  if (rng.Chance(0.015)) ms *= 4 + 16 * rng.Uniform();  // a congested radio link
  return ms;
}

}  // namespace

std::string_view EventName(EventKind k) {
  switch (k) {
    case EventKind::kHeartbeat: return "heartbeat";
    case EventKind::kSwitchOn: return "switch_on";
    case EventKind::kSwitchOff: return "switch_off";
    case EventKind::kDim: return "dim";
    case EventKind::kFault: return "fault";
    case EventKind::kReboot: return "reboot";
  }
  return "heartbeat";
}

std::string_view LampWorld::FirmwareName(uint8_t i) { return kFirmware[i % kFirmware.size()]; }
std::string_view LampWorld::FaultName(uint8_t i) { return kFaults[i % kFaults.size()]; }

LampWorld::LampWorld(uint64_t seed, uint32_t lamps, int64_t start_ms, double bad_rate)
    : seed_(seed), start_ms_(start_ms), bad_rate_(bad_rate) {
  uint32_t total_weight = 0;
  for (const DistrictDef& d : kDistricts) total_weight += d.weight;
  lamps_.resize(lamps);
  for (uint32_t i = 0; i < lamps; ++i) {
    GenRng rng(Mix(seed, 0x1A3D00000000ull + i));
    Lamp& l = lamps_[i];
    // 7919 is coprime with 100000, so ids are distinct and look scattered.
    char id[16];
    std::snprintf(id, sizeof id, "L-%05u", static_cast<unsigned>((uint64_t{i} * 7919 + 421) % 100000));
    l.id = id;
    uint32_t w = static_cast<uint32_t>(rng.Below(total_weight));
    uint8_t d = 0;
    while (w >= kDistricts[d].weight) w -= kDistricts[d++].weight;
    l.district = d;
    l.beta = rng.Chance(0.08);
    l.flaky = rng.Chance(0.03);
    l.initial_fw = rng.Chance(0.6) ? 0 : 1;
    // Upgrades roll out from 6 h after the start over three days.
    l.upgrade_ms = start_ms + 6 * 3'600'000 + static_cast<int64_t>(rng.Uniform() * 72 * 3'600'000);
  }
}

std::string_view LampWorld::District(uint32_t lamp) const { return kDistricts[lamps_[lamp].district].name; }
std::string_view LampWorld::Channel(uint32_t lamp) const { return lamps_[lamp].beta ? "beta" : "stable"; }

uint64_t LampWorld::LinesFor(uint32_t index, uint64_t mean_lines, double spread) const {
  uint64_t s = Mix(seed_ ^ 0x5157A2Dull, index);
  const double u = static_cast<double>(SplitMix64(&s) >> 11) * 0x1.0p-53;
  const double lines = static_cast<double>(mean_lines) * (1 - spread + 2 * spread * u);
  return lines < 1 ? 1 : static_cast<uint64_t>(lines + 0.5);
}

void LampWorld::FillEvent(const Lamp& lamp, int local_hour, GenRng& rng, LampEvent* e) const {
  // Event kind: heartbeats dominate; flaky lamps fault ten times as often.
  const double fault_p = lamp.flaky ? 0.25 : 0.025;
  double u = rng.Uniform();
  if (u < fault_p) {
    e->kind = EventKind::kFault;
  } else if ((u -= fault_p) < 0.015) {
    e->kind = EventKind::kReboot;
  } else if ((u -= 0.015) < 0.05) {
    e->kind = EventKind::kSwitchOn;
  } else if ((u -= 0.05) < 0.05) {
    e->kind = EventKind::kSwitchOff;
  } else if ((u -= 0.05) < 0.05) {
    e->kind = EventKind::kDim;
  } else {
    e->kind = EventKind::kHeartbeat;
  }

  // Power: lit at night (local 18:00-06:59), on standby by day.
  const bool night = local_hour >= 18 || local_hour < 7;
  switch (e->kind) {
    case EventKind::kHeartbeat:
      e->power_tenths = night ? UniformTenths(rng, 45, 80) : UniformTenths(rng, 0.3, 1.5);
      break;
    case EventKind::kSwitchOn: e->power_tenths = UniformTenths(rng, 55, 85); break;
    case EventKind::kSwitchOff: e->power_tenths = UniformTenths(rng, 0.3, 1.5); break;
    case EventKind::kDim: e->power_tenths = UniformTenths(rng, 20, 40); break;
    case EventKind::kFault: e->power_tenths = UniformTenths(rng, 0, 90); break;
    case EventKind::kReboot: e->power_tenths = UniformTenths(rng, 1, 5); break;
  }
  u = rng.Uniform();
  e->power_style = u < 0.85   ? PowerStyle::kNumber
                   : u < 0.90 ? PowerStyle::kMissing
                   : u < 0.95 ? PowerStyle::kNull
                   : u < 0.99 ? PowerStyle::kNumericText
                              : PowerStyle::kJunkText;

  e->has_latency = !rng.Chance(0.01);
  e->latency_hundredths = Round(Latency(rng) * 100);

  u = rng.Uniform();
  e->reading_count = u < 0.93 ? 2 : u < 0.96 ? 1 : u < 0.98 ? 0 : 3;
  const bool warm = local_hour >= 10 && local_hour <= 16;
  e->temp_tenths = (warm ? 100 : 40) + static_cast<int32_t>(rng.Below(121)) - 60;
  e->humidity = 55 + static_cast<int32_t>(rng.Below(41));

  if (e->kind == EventKind::kFault) {
    e->fault_style = FaultStyle::kCode;
    const double f = rng.Uniform();
    uint8_t c = 0;
    while (f >= kFaultCumulative[c]) ++c;
    e->fault_code = c;
  } else {
    e->fault_style = rng.Chance(0.7) ? FaultStyle::kNull : FaultStyle::kMissing;
  }

  e->malformed = rng.Chance(bad_rate_);
  e->corruption = rng.Next();
}

void LampWorld::Generate(uint32_t index, uint64_t lines, std::vector<LampEvent>* out) const {
  out->clear();
  out->resize(lines);
  GenRng rng(Mix(seed_, index));
  const int64_t hour_start = HourStart(index);
  const uint64_t tag_seed = Mix(seed_ ^ 0x7A6500000000ull, index);
  const uint64_t step = 3'600'000 / lines;  // ms between slots; jitter stays inside one
  for (uint64_t i = 0; i < lines; ++i) {
    LampEvent& e = (*out)[i];
    e.t_ms = hour_start + static_cast<int64_t>(i * 3'600'000 / lines);
    if (step > 1) e.t_ms += static_cast<int64_t>(rng.Below(step));
    const double u = rng.Uniform();
    e.time_style = u < 0.83   ? TimeStyle::kUtc
                   : u < 0.91 ? TimeStyle::kPlusOne
                   : u < 0.93 ? TimeStyle::kMinusThreeThirty
                              : TimeStyle::kEpochMs;
    e.lamp = static_cast<uint32_t>(rng.Below(lamps_.size()));
    const Lamp& lamp = lamps_[e.lamp];
    e.firmware = e.t_ms < lamp.upgrade_ms ? lamp.initial_fw : (lamp.beta ? 3 : 2);
    // The city's local time is UTC+1; only the day/night pattern uses it.
    const int local_hour = static_cast<int>(((e.t_ms / 3'600'000) + 1) % 24);
    FillEvent(lamp, local_hour, rng, &e);
    if (tags_ > 0) e.tag = Mix(tag_seed, i) % tags_;
  }
}

}  // namespace fanfold::gen
