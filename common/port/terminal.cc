#include "common/port/terminal.h"

#include <sys/ioctl.h>
#include <unistd.h>

namespace fanfold {

bool StderrIsTerminal() { return ::isatty(STDERR_FILENO) != 0; }

size_t StderrColumns(size_t fallback) {
  struct winsize ws {};
  if (::ioctl(STDERR_FILENO, TIOCGWINSZ, &ws) == 0 && ws.ws_col > 0) return ws.ws_col;
  return fallback;
}

}  // namespace fanfold
