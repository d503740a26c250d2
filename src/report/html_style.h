// The report page's inline style sheet (our own look), kept apart from the page builder.
#pragma once

#include <string_view>

namespace credence::report {

/// CSS for HtmlReport pages: no external fonts or images, print-friendly.
std::string_view page_style();

}  // namespace credence::report
