#include "storage/csv_table.h"

#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

namespace furrow {
namespace {

// Largest file read for analysis: far above any trial (a 5,000-plot trial
// with 50 traits is about 3 MB) and small enough to hold in memory.
constexpr std::streamoff kMaxFileBytes = 256LL * 1024 * 1024;

CsvRead fail(std::string message, int line, std::string column = {}) {
  CsvRead r;
  r.problem = {std::move(message), line, std::move(column)};
  return r;
}

bool valid_utf8(const std::string& s, size_t* bad_at) {
  size_t i = 0;
  while (i < s.size()) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    int extra = -1;
    if (c < 0x80) extra = 0;
    else if (c >= 0xC2 && c <= 0xDF) extra = 1;
    else if (c >= 0xE0 && c <= 0xEF) extra = 2;
    else if (c >= 0xF0 && c <= 0xF4) extra = 3;
    if (extra < 0 || i + extra >= s.size() + (extra == 0 ? 1 : 0)) { *bad_at = i; return false; }
    for (int k = 1; k <= extra; ++k)
      if ((static_cast<unsigned char>(s[i + k]) >> 6) != 0x2) { *bad_at = i; return false; }
    i += extra + 1;
  }
  return true;
}

}  // namespace

CsvRecords parse_csv_records(const std::string& input) {
  auto fail = [](std::string message, int line) {
    CsvRecords r;
    r.problem = {std::move(message), line, {}};
    return r;
  };
  std::string text = input;
  if (text.rfind("\xEF\xBB\xBF", 0) == 0) text.erase(0, 3);
  size_t bad = 0;
  if (!valid_utf8(text, &bad)) {
    int line = 1;
    for (size_t i = 0; i < bad; ++i) if (text[i] == '\n') ++line;
    return fail("the text is not valid UTF-8", line);
  }
  std::vector<std::vector<std::string>> rows;
  std::vector<int> row_line;
  std::vector<std::string> row;
  std::string field;
  bool in_quotes = false, row_started = false;
  int line = 1, row_start_line = 1, quote_line = 0;
  auto end_field = [&]() { row.push_back(field); field.clear(); };
  auto end_row = [&]() {
    end_field();
    const bool blank = row.size() == 1 && row[0].empty();
    if (!blank) { rows.push_back(row); row_line.push_back(row_start_line); }
    row.clear();
    row_started = false;
  };
  for (size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (!row_started) { row_started = true; row_start_line = line; }
    if (in_quotes) {
      if (c == '"') {
        if (i + 1 < text.size() && text[i + 1] == '"') { field += '"'; ++i; }
        else in_quotes = false;
      } else {
        if (c == '\n') ++line;
        field += c;
      }
      continue;
    }
    if (c == '"') {
      if (!field.empty()) return fail("a quote inside an unquoted field", line);
      in_quotes = true;
      quote_line = line;
    } else if (c == ',') {
      end_field();
    } else if (c == '\r' && i + 1 < text.size() && text[i + 1] == '\n') {
      continue;
    } else if (c == '\n') {
      end_row();
      ++line;
    } else {
      field += c;
    }
  }
  if (in_quotes) return fail("a quoted field is never closed", quote_line);
  if (row_started) end_row();
  CsvRecords out;
  out.ok = true;
  for (size_t i = 0; i < rows.size(); ++i) out.rows.push_back({row_line[i], std::move(rows[i])});
  return out;
}

CsvRead parse_csv_text(const std::string& input) {
  CsvRecords records = parse_csv_records(input);
  if (!records.ok) {
    CsvRead r;
    r.problem = records.problem;
    return r;
  }
  std::vector<std::vector<std::string>> rows;
  std::vector<int> row_line;
  for (auto& r : records.rows) { rows.push_back(std::move(r.fields)); row_line.push_back(r.line); }
  if (rows.empty()) return fail("the file is empty: it needs a header line with column names", 1);
  CsvRead out;
  std::set<std::string> names;
  for (size_t c = 0; c < rows[0].size(); ++c) {
    std::string name = rows[0][c];
    while (!name.empty() && std::isspace(static_cast<unsigned char>(name.back()))) name.pop_back();
    while (!name.empty() && std::isspace(static_cast<unsigned char>(name.front()))) name.erase(0, 1);
    if (name.empty()) return fail("column " + std::to_string(c + 1) + " of the header has no name", row_line[0]);
    if (!names.insert(name).second) return fail("column name '" + name + "' appears twice in the header", row_line[0], name);
    out.csv.table.columns.push_back({name, {}});
  }
  for (size_t r = 1; r < rows.size(); ++r) {
    if (rows[r].size() != rows[0].size())
      return fail("expected " + std::to_string(rows[0].size()) + " fields as in the header, found " +
                      std::to_string(rows[r].size()),
                  row_line[r]);
    for (size_t c = 0; c < rows[r].size(); ++c) out.csv.table.columns[c].cells.push_back(rows[r][c]);
    out.csv.line_of_record.push_back(row_line[r]);
  }
  out.csv.header_line = row_line[0];
  if (out.csv.line_of_record.empty()) return fail("the file has a header but no data lines", row_line[0]);
  out.ok = true;
  return out;
}

namespace {
Result<std::string> read_whole(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) return make_problem("this is a folder, not a file");
  std::ifstream in(path, std::ios::binary);
  if (!in) return make_problem("cannot open the file");
  in.seekg(0, std::ios::end);
  const std::streamoff size = in.tellg();
  if (size > kMaxFileBytes) return make_problem("the file is larger than 256 MB");
  in.seekg(0);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}
}  // namespace

CsvRecords read_csv_records(const std::string& path) {
  auto text = read_whole(path);
  if (!text) {
    CsvRecords r;
    r.problem = {text.problem().message, 0, {}};
    return r;
  }
  return parse_csv_records(*text);
}

CsvRead read_csv_file(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) return fail("this is a folder, not a file", 0);
  std::ifstream in(path, std::ios::binary);
  if (!in) return fail("cannot open the file", 0);
  in.seekg(0, std::ios::end);
  const std::streamoff size = in.tellg();
  if (size > kMaxFileBytes) return fail("the file is larger than 256 MB", 0);
  in.seekg(0);
  std::ostringstream s;
  s << in.rdbuf();
  return parse_csv_text(s.str());
}

}  // namespace furrow
