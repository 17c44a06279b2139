#pragma once
// Writing a whole text file so that a reader never sees half of it: the text
// goes to "<path>.part" first, which then replaces `path` in one rename.

#include <string>

#include "core/result.h"

namespace furrow {

Status write_text_file(const std::string& path, const std::string& text);

// Whether `path` can be written as a new or replaced plain file: its folder
// exists, and it is not a folder, a link or a device (replacing those would
// not do what was meant). Checked before anything is written.
Status check_output_file(const std::string& path);

}  // namespace furrow
