#include "storage/csv_table.h"

#include <doctest/doctest.h>

namespace furrow {
namespace {

TEST_CASE("quoted fields, CRLF line ends and a byte-order mark are read") {
  const CsvRead r = parse_csv_text("\xEF\xBB\xBFplot,note,y\r\n101,\"flooded, then dried\",4.5\r\n102,\"said \"\"ok\"\"\",5\r\n");
  REQUIRE(r.ok);
  CHECK(r.csv.table.columns[0].name == "plot");
  CHECK(r.csv.table.columns[1].cells[0] == "flooded, then dried");
  CHECK(r.csv.table.columns[1].cells[1] == "said \"ok\"");
  CHECK(r.csv.line_of_record == std::vector<int>{2, 3});
}

TEST_CASE("a line with the wrong number of fields is named by its file line") {
  const CsvRead r = parse_csv_text("a,b\n1,2\n\n3\n");
  REQUIRE_FALSE(r.ok);
  CHECK(r.problem.line == 4);
  CHECK(r.problem.message.find("expected 2 fields") != std::string::npos);
}

TEST_CASE("malformed files are refused with a plain message") {
  CHECK_FALSE(parse_csv_text("").ok);
  CHECK_FALSE(parse_csv_text("a,b\n").ok);                     // header only
  CHECK_FALSE(parse_csv_text("a,a\n1,2\n").ok);                // duplicate column
  CHECK_FALSE(parse_csv_text("a,\n1,2\n").ok);                 // unnamed column
  CHECK(parse_csv_text("a,b\n\"1,2\n").problem.message.find("never closed") != std::string::npos);
  const CsvRead bad = parse_csv_text("a,b\n1,2\n3,\xff\n");
  REQUIRE_FALSE(bad.ok);
  CHECK(bad.problem.line == 3);
  CHECK(bad.problem.message.find("UTF-8") != std::string::npos);
}

}  // namespace
}  // namespace furrow
