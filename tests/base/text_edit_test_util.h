// Test helper shared by the tests that feed parsers randomly edited text:
// one edit of one byte. Pure function; header-only.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

namespace fanfold {

// Edit `op` % 3 of *t at position `at` (0..size): 0 erases the byte there,
// 1 inserts c before it, 2 replaces it with c. An erase or replace at the
// end changes nothing.
inline void EditOneByte(std::string* t, size_t at, char c, uint32_t op) {
  switch (op % 3) {
    case 0:
      if (at < t->size()) t->erase(at, 1);
      break;
    case 1: t->insert(at, 1, c); break;
    default:
      if (at < t->size()) (*t)[at] = c;
      break;
  }
}

}  // namespace fanfold
