// ReportPage: the frame every HTML page of `report` and `scale` shares —
// its style sheet (colours safe for colour-vision deficiencies), the small
// script that sorts tables, the head with the chart definitions, and the
// foot. Pure functions; thread-safe.
#pragma once

#include <string>

namespace fanfold {

// The page up to and including <main>, titled `title` (escaped here).
std::string PageStart(const std::string& title);

// </main> after `footer` (HTML, not escaped), the script, and the end of the page.
std::string PageEnd(const std::string& footer);

}  // namespace fanfold
