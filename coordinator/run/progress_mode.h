// ProgressMode: how a run shows its progress on stderr — kAuto (a live line
// on a terminal, else plain lines), kLive, kPlain (a timestamped line every
// few seconds) or kOff. Its own header so that RunOptions can name it
// without pulling in the meter (coordinator/run/progress_meter.h). Values only.
#pragma once

#include <string_view>

namespace fanfold {

enum class ProgressMode { kAuto, kLive, kPlain, kOff };

// Parses "auto", "live", "plain", "off". Returns false iff unknown.
inline bool ParseProgressMode(std::string_view text, ProgressMode* out) {
  if (text == "auto") *out = ProgressMode::kAuto;
  else if (text == "live") *out = ProgressMode::kLive;
  else if (text == "plain") *out = ProgressMode::kPlain;
  else if (text == "off") *out = ProgressMode::kOff;
  else return false;
  return true;
}

}  // namespace fanfold
