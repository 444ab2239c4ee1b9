#include "coordinator/run/console_log.h"

#include <cstdio>
#include <cstdlib>
#include <algorithm>
#include <cstring>
#include <memory>
#include <mutex>

#include <spdlog/details/null_mutex.h>
#include <spdlog/logger.h>
#include <spdlog/sinks/base_sink.h>

#include "common/port/terminal.h"

namespace fanfold {
namespace {

// What the live line shows now; empty = nothing drawn.
std::string g_live;
size_t g_live_width = 0;  // columns the drawn text took (for erasing)

void WriteRaw(std::string_view bytes) {
  std::fwrite(bytes.data(), 1, bytes.size(), stderr);
}

size_t TerminalColumns() { return StderrColumns(80); }

// Visible width of text: escape sequences (ESC [ ... letter) take none,
// UTF-8 continuation bytes take none.
size_t VisibleWidth(std::string_view s) {
  size_t w = 0;
  for (size_t i = 0; i < s.size(); ++i) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      while (i < s.size() && !(s[i] >= '@' && s[i] <= '~' && s[i] != '[')) ++i;
      continue;
    }
    if ((c & 0xC0) != 0x80) ++w;
  }
  return w;
}

// Cuts text to `cols` visible columns, keeping escape sequences whole and
// resetting attributes if any were cut off.
std::string CutToWidth(const std::string& s, size_t cols) {
  if (VisibleWidth(s) <= cols) return s;
  std::string out;
  size_t w = 0;
  bool had_escape = false;
  for (size_t i = 0; i < s.size(); ++i) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      size_t j = i;
      while (j < s.size() && !(s[j] >= '@' && s[j] <= '~' && s[j] != '[')) ++j;
      out.append(s, i, j - i + 1);
      had_escape = true;
      i = j;
      continue;
    }
    if ((c & 0xC0) != 0x80) {
      if (w == cols) break;
      ++w;
    }
    out.push_back(static_cast<char>(c));
  }
  if (had_escape) out += "\x1b[0m";
  return out;
}

void EraseLive() {
  if (g_live.empty()) return;
  // Spaces rather than an erase-line escape: works on any terminal.
  WriteRaw("\r" + std::string(g_live_width, ' ') + "\r");
}

void RedrawLive() {
  if (g_live.empty()) return;
  WriteRaw(g_live);
  std::fflush(stderr);
}

// spdlog sink: "fanfold: [level: ]message\n" on stderr, around the live line.
class ConsoleSink final : public spdlog::sinks::base_sink<spdlog::details::null_mutex> {
 protected:
  void sink_it_(const spdlog::details::log_msg& msg) override {
    std::string line = "fanfold: ";
    if (msg.level == spdlog::level::warn) line += "warning: ";
    if (msg.level == spdlog::level::err) line += "error: ";
    if (msg.level == spdlog::level::debug || msg.level == spdlog::level::trace) line += "debug: ";
    line.append(msg.payload.data(), msg.payload.size());
    line.push_back('\n');
    EraseLive();
    WriteRaw(line);
    RedrawLive();
    std::fflush(stderr);
  }
  void flush_() override { std::fflush(stderr); }
};

spdlog::level::level_enum ToSpd(LogLevel l) {
  switch (l) {
    case LogLevel::kDebug: return spdlog::level::debug;
    case LogLevel::kInfo: return spdlog::level::info;
    case LogLevel::kWarning: return spdlog::level::warn;
    case LogLevel::kError: return spdlog::level::err;
    case LogLevel::kOff: return spdlog::level::off;
  }
  return spdlog::level::info;
}

LogLevel g_level = LogLevel::kInfo;

spdlog::logger& Logger() {
  // Not registered in spdlog's global registry: nothing else can reach it.
  static spdlog::logger logger("fanfold", std::make_shared<ConsoleSink>());
  static bool init = [] {
    logger.set_level(ToSpd(g_level));
    logger.flush_on(spdlog::level::debug);
    return true;
  }();
  (void)init;
  return logger;
}

}  // namespace

bool ParseLogLevel(std::string_view text, LogLevel* out) {
  if (text == "debug") *out = LogLevel::kDebug;
  else if (text == "info") *out = LogLevel::kInfo;
  else if (text == "warning" || text == "warn") *out = LogLevel::kWarning;
  else if (text == "error") *out = LogLevel::kError;
  else if (text == "off") *out = LogLevel::kOff;
  else return false;
  return true;
}

const char* LogLevelNames() { return "debug, info, warning, error, off"; }

void SetLogLevel(LogLevel level) {
  g_level = level;
  Logger().set_level(ToSpd(level));
}

LogLevel CurrentLogLevel() { return g_level; }

void LogDebug(const std::string& m) { Logger().log(spdlog::level::debug, spdlog::string_view_t(m)); }
void LogInfo(const std::string& m) { Logger().log(spdlog::level::info, spdlog::string_view_t(m)); }
void LogWarning(const std::string& m) { Logger().log(spdlog::level::warn, spdlog::string_view_t(m)); }

size_t ConsoleColumns() { return TerminalColumns(); }

void DrawLiveLine(const std::string& text) {
  const size_t cols = TerminalColumns();
  std::string cut = CutToWidth(text, cols > 1 ? cols - 1 : cols);
  const size_t width = VisibleWidth(cut);
  std::string out = "\r" + cut;
  // Pad over the rest of a longer previous line.
  if (!g_live.empty() && g_live_width > width) out += std::string(g_live_width - width, ' ');
  WriteRaw(out);
  std::fflush(stderr);
  g_live = "\r" + cut;
  g_live_width = width;
}

void ClearLiveLine() {
  EraseLive();
  std::fflush(stderr);
  g_live.clear();
  g_live_width = 0;
}

void WriteConsoleLine(const std::string& text) {
  EraseLive();
  WriteRaw(text + "\n");
  RedrawLive();
  std::fflush(stderr);
}

bool StderrIsLiveTerminal() {
  if (!StderrIsTerminal()) return false;
  const char* term = std::getenv("TERM");
  return !(term && std::strcmp(term, "dumb") == 0);
}

bool StderrWantsColor() {
  const char* no_color = std::getenv("NO_COLOR");
  if (no_color && *no_color) return false;
  return StderrIsLiveTerminal();
}

}  // namespace fanfold
