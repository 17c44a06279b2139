#pragma once
// Writing a whole text file so that a reader never sees half of it: the text
// goes to "<path>.part" first, which then replaces `path` in one rename.

#include <string>

#include "core/result.h"

namespace furrow {

Status write_text_file(const std::string& path, const std::string& text);

}  // namespace furrow
