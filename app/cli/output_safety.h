#pragma once
// What the command line prints is made safe for where it goes: text from a
// bundle or a crew's note never drives the station manager's terminal, JSON
// never aborts on invalid UTF-8, and a file is named once in a message.

#include <nlohmann/json_fwd.hpp>
#include <string>

namespace furrow {

// Control characters (C0, DEL and C1, which start terminal escape sequences)
// shown as "?"; invalid UTF-8 bytes too. Printable text is unchanged.
std::string terminal_safe(const std::string& text);

// JSON text of `value` (indented by 2). Invalid UTF-8 in any string is
// replaced by U+FFFD and `*replaced` set, so that the caller can say so.
std::string json_text(const nlohmann::json& value, bool* replaced);

// "f.furrow: f.furrow: disk full" -> "f.furrow: disk full".
std::string named_once(const std::string& message);

}  // namespace furrow
