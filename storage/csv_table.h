#pragma once
// Reading a CSV file (RFC 4180: comma separated, double quotes around fields
// that hold commas, quotes or line breaks; LF or CRLF line ends; an optional
// UTF-8 byte-order mark) into a PlotTable of text cells. The first line holds
// the column names.

#include <string>
#include <vector>

#include "core/analysis.h"
#include "core/result.h"

namespace furrow {

struct CsvTable {
  PlotTable table;
  std::vector<int> line_of_record;   // 1-based file line where each record starts
  int header_line = 1;               // the line holding the column names
};

// Parses CSV text. Problems carry the 0-based record (or -1 for the header)
// and the column; `line_of_record` lets callers name the file line.
struct CsvProblem {
  std::string message;
  int line = 0;          // 1-based file line, 0 when not tied to a line
  std::string column;
};

// Result of a read: either the table or the problem with its file line.
struct CsvRead {
  bool ok = false;
  CsvTable csv;
  CsvProblem problem;
};

CsvRead parse_csv_text(const std::string& text);

// The rows of a CSV text with their 1-based starting lines, without the
// equal-field-count rule (files whose lines are records of several kinds).
struct CsvRecord {
  int line = 0;
  std::vector<std::string> fields;
};
struct CsvRecords {
  bool ok = false;
  std::vector<CsvRecord> rows;
  CsvProblem problem;
};
CsvRecords parse_csv_records(const std::string& text);
// Reads a whole file (at most 256 MB); problem.line 0 when it cannot be read.
CsvRecords read_csv_records(const std::string& path);
CsvRead read_csv_file(const std::string& path);

}  // namespace furrow
