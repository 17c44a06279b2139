#pragma once
// The code printed on a plot's stake (as a QR code), a format of our own:
//
//   FRW1|<trial uid>|<trial name>|<plot label>
//
// one line (a scanner that types it ends with Enter once; the name cut to
// its first 40 bytes), fields separated
// by '|'; in the name and label, '%' and '|' are written as %25 and %7C.
// The trial uid (32 hex digits) is the identity shared by the station's file
// and every device's copy, so a stake opens its plot on any copy of its
// trial and is refused, by name, on any other.

#include <optional>
#include <string>

namespace furrow {

// The trial's name in a code is cut to this many bytes (whole characters).
inline constexpr size_t kStakeNameBytes = 40;

struct StakeCode {
  std::string trial_uid, trial_name, plot_label;
};

std::string stake_code_text(const StakeCode& code);

// The stake code in `text` (spaces around it ignored); nullopt when the text
// is not one (a label typed or scanned from an older stake).
std::optional<StakeCode> read_stake_code(const std::string& text);

// The words for a stake of another trial scanned into `this_trial_name`'s
// copy ("this stake belongs to the trial 'X' (plot 101), not to 'Y'"; when the
// names are alike, that it is another trial of that name).
std::string stake_of_other_trial(const StakeCode& code, const std::string& this_trial_name);

}  // namespace furrow
