#include "core/stake_code.h"

#include <cctype>
#include <vector>

namespace furrow {
namespace {

constexpr const char* kTag = "FRW1";

std::string escaped(const std::string& s) {
  std::string out;
  for (char c : s) {
    if (c == '%') out += "%25";
    else if (c == '|') out += "%7C";
    else out += c;
  }
  return out;
}

std::optional<std::string> unescaped(const std::string& s) {
  std::string out;
  for (size_t i = 0; i < s.size(); ++i) {
    if (s[i] != '%') { out += s[i]; continue; }
    if (s.compare(i, 3, "%25") == 0) out += '%';
    else if (s.compare(i, 3, "%7C") == 0 || s.compare(i, 3, "%7c") == 0) out += '|';
    else return std::nullopt;
    i += 2;
  }
  return out;
}

}  // namespace

std::string stake_code_text(const StakeCode& code) {
  // The name serves messages only (the uid identifies): its first
  // kStakeNameBytes bytes, whole UTF-8 characters, keep the code small.
  std::string name = code.trial_name;
  if (name.size() > kStakeNameBytes) {
    size_t cut = kStakeNameBytes;
    while (cut > 0 && (static_cast<unsigned char>(name[cut]) & 0xC0) == 0x80) --cut;
    name.resize(cut);
  }
  return std::string(kTag) + "|" + code.trial_uid + "|" + escaped(name) + "|" + escaped(code.plot_label);
}

std::optional<StakeCode> read_stake_code(const std::string& text) {
  size_t a = 0, b = text.size();
  while (a < b && std::isspace(static_cast<unsigned char>(text[a]))) ++a;
  while (b > a && std::isspace(static_cast<unsigned char>(text[b - 1]))) --b;
  const std::string t = text.substr(a, b - a);
  std::vector<std::string> fields;
  size_t start = 0;
  for (size_t i = 0; i <= t.size(); ++i)
    if (i == t.size() || t[i] == '|') {
      fields.push_back(t.substr(start, i - start));
      start = i + 1;
    }
  if (fields.size() != 4 || fields[0] != kTag || fields[1].size() != 32) return std::nullopt;
  for (char c : fields[1])
    if (!std::isxdigit(static_cast<unsigned char>(c))) return std::nullopt;
  auto name = unescaped(fields[2]);
  auto label = unescaped(fields[3]);
  if (!name || !label || label->empty()) return std::nullopt;
  return StakeCode{fields[1], *name, *label};
}

std::string stake_of_other_trial(const StakeCode& code, const std::string& this_trial_name) {
  if (this_trial_name.compare(0, code.trial_name.size(), code.trial_name) == 0)
    return "this stake belongs to another trial named '" + code.trial_name + "' (plot " + code.plot_label +
           "; identity " + code.trial_uid.substr(0, 8) +
           "...), not to this one: a trial made again from the same plan has new stakes";
  return "this stake belongs to the trial '" + code.trial_name + "' (plot " + code.plot_label + "), not to '" +
         this_trial_name + "'";
}

}  // namespace furrow
