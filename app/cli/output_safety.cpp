#include "app/cli/output_safety.h"

#include <nlohmann/json.hpp>

namespace furrow {

namespace {
// Length of the valid UTF-8 sequence at s[i], or 0 (overlong forms,
// surrogates and code points above U+10FFFF are invalid; RFC 3629).
size_t utf8_length(const std::string& s, size_t i) {
  const auto b = [&](size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char c = b(i);
  if (c < 0x80) return 1;
  size_t n = c >= 0xF0 ? 4 : c >= 0xE0 ? 3 : c >= 0xC2 ? 2 : 0;
  if (n == 0 || c > 0xF4 || i + n > s.size()) return 0;
  for (size_t k = 1; k < n; ++k)
    if ((b(i + k) & 0xC0) != 0x80) return 0;
  if (c == 0xE0 && b(i + 1) < 0xA0) return 0;   // overlong
  if (c == 0xED && b(i + 1) >= 0xA0) return 0;  // surrogates
  if (c == 0xF0 && b(i + 1) < 0x90) return 0;   // overlong
  if (c == 0xF4 && b(i + 1) >= 0x90) return 0;  // above U+10FFFF
  return n;
}
}  // namespace

std::string terminal_safe(const std::string& text) {
  std::string out;
  for (size_t i = 0; i < text.size();) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    const size_t n = utf8_length(text, i);
    if (n == 0 || c < 0x20 || c == 0x7F) {
      out += '?';
      i += n ? n : 1;
      continue;
    }
    // C1 controls U+0080-U+009F are C2 80 - C2 9F in UTF-8.
    if (n == 2 && c == 0xC2 && static_cast<unsigned char>(text[i + 1]) < 0xA0) {
      out += '?';
      i += 2;
      continue;
    }
    out.append(text, i, n);
    i += n;
  }
  return out;
}

std::string json_text(const nlohmann::json& value, bool* replaced) {
  *replaced = false;
  try {
    return value.dump(2);
  } catch (const nlohmann::json::type_error&) {
    *replaced = true;
    return value.dump(2, ' ', false, nlohmann::json::error_handler_t::replace);
  }
}

std::string named_once(const std::string& message) {
  const size_t colon = message.find(": ");
  if (colon == std::string::npos || colon == 0) return message;
  const std::string name = message.substr(0, colon);
  const std::string rest = message.substr(colon + 2);
  if (rest.rfind(name + ":", 0) == 0 || rest.rfind(name + " ", 0) == 0) return rest;
  return message;
}

}  // namespace furrow
