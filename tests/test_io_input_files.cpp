// Reading input files (lib/io/input_file.hpp, lib/io/csv.hpp): bounded reads, clear words for
// folders and devices, and the habits of real CSV files (byte-order mark, other separators,
// decimal commas, a trailing empty column, huge fields).
#include <gtest/gtest.h>

#include <chrono>
#include <csignal>
#include <fcntl.h>
#include <sys/stat.h>
#include <thread>
#include <unistd.h>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "support.hpp"

namespace {

using ordex::InputError;

std::string file_with(const std::string& name, const std::string& text) {
  const std::string p = ordex_test::temp_dir() + "/" + name;
  ordex_test::write_file(p, text);
  return p;
}

std::string csv_error(const std::string& path) {
  try {
    ordex::read_csv(path);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

const std::string kBom = "\xEF\xBB\xBF";

TEST(CsvHabits, ByteOrderMarkIsIgnored) {
  ordex::CsvTable t = ordex::read_csv(file_with("bom.csv", kBom + "t,pitch\n0,1\n1,2\n"));
  EXPECT_EQ(t.header, (std::vector<std::string>{"t", "pitch"}));
  EXPECT_EQ(t.values.rows(), 2);
  // Before a comment line: the comment stays a comment, the next line is the header.
  t = ordex::read_csv(file_with("bom_comment.csv", kBom + "# logged 2026\nt,pitch\n0,1\n1,2\n"));
  EXPECT_EQ(t.header, (std::vector<std::string>{"t", "pitch"}));
  EXPECT_EQ(t.header_line, 2);
}

TEST(CsvHabits, OtherSeparatorsAreNamed) {
  std::string m = csv_error(file_with("semicolon.csv", "t;pitch\n0;1,5\n"));
  EXPECT_NE(m.find("semicolon.csv:1: fields are separated by ';'; the separator must be a comma"),
            std::string::npos) << m;
  m = csv_error(file_with("tabs.csv", "t\tpitch\n0\t1.5\n"));
  EXPECT_NE(m.find("tabs.csv:1: fields are separated by tabs; the separator must be a comma"),
            std::string::npos) << m;
  // Commas as separators but decimal commas in the numbers: too many fields, said so.
  m = csv_error(file_with("decimal_comma.csv", "t,pitch\n0,1,5\n"));
  EXPECT_NE(m.find("decimal_comma.csv:2: 3 fields, the header has 2 (a decimal comma?"), std::string::npos) << m;
  m = csv_error(file_with("decimal_semicolon.csv", "t,pitch\n0;1,5\n"));
  EXPECT_NE(m.find("separator must be a comma"), std::string::npos) << m;
}

TEST(CsvHabits, TrailingEmptyColumnIsAccepted) {
  ordex::CsvTable t = ordex::read_csv(file_with("trailing.csv", "t,pitch,\n0,1,\n1,2,\n"));
  EXPECT_EQ(t.header, (std::vector<std::string>{"t", "pitch"}));
  ASSERT_EQ(t.values.rows(), 2);
  EXPECT_EQ(t.values(1, 1), 2.0);
  // Rows ending in a separator under a header that does not.
  t = ordex::read_csv(file_with("trailing_rows.csv", "t,pitch\n0,1,\n1,2\n"));
  EXPECT_EQ(t.values.rows(), 2);
  // A missing value is still an error.
  EXPECT_NE(csv_error(file_with("missing.csv", "t,pitch,roll\n0,1,\n")).find("'roll': '' is not a finite number"),
            std::string::npos);
}

TEST(CsvHabits, ErrorLinesQuoteAtMostAboutEightyCharacters) {
  const std::string huge(200000, '7');
  std::string m = csv_error(file_with("huge.csv", "t,pitch\n0," + huge + "x\n"));
  EXPECT_LT(m.size(), 300u) << m.substr(0, 400);
  EXPECT_NE(m.find("(200001 characters)"), std::string::npos) << m;
  EXPECT_EQ(ordex::quote_clipped("abc"), "'abc'");
  EXPECT_EQ(ordex::quote_clipped(std::string(100, 'a'), 10), "'aaaaaaa...' (100 characters)");
}

TEST(InputFiles, FolderAndDeviceAreNamed) {
  std::string m = csv_error(ordex_test::temp_dir());
  EXPECT_NE(m.find("is a folder, not a CSV file"), std::string::npos) << m;
  // /dev/zero would be read until memory runs out: it is refused at once.
  const auto start = std::chrono::steady_clock::now();
  m = csv_error("/dev/zero");
  EXPECT_NE(m.find("/dev/zero: not a regular file"), std::string::npos) << m;
  EXPECT_LT(std::chrono::steady_clock::now() - start, std::chrono::seconds(5));
  m = csv_error(ordex_test::temp_dir() + "/absent.csv");
  EXPECT_NE(m.find("absent.csv: no such CSV file"), std::string::npos) << m;
}

TEST(InputFiles, EndlessLineFromAPipeIsCut) {
  // A FIFO (as a shell's <(...) gives) is allowed, but its lines are bounded.
  const std::string fifo = ordex_test::temp_dir() + "/endless";
  ::unlink(fifo.c_str());
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  std::thread writer([&] {
    int fd = ::open(fifo.c_str(), O_WRONLY);
    std::string block(1 << 16, '9');
    std::size_t limit = ordex::input_limits().max_line_bytes + (1 << 20);
    for (std::size_t sent = 0; sent < limit;) {
      ssize_t w = ::write(fd, block.data(), block.size());
      if (w <= 0) break;  // the reader stopped (EPIPE)
      sent += static_cast<std::size_t>(w);
    }
    ::close(fd);
  });
  ::signal(SIGPIPE, SIG_IGN);
  std::string m = csv_error(fifo);
  writer.join();
  EXPECT_NE(m.find("endless:1: line longer than"), std::string::npos) << m;
}

TEST(InputFiles, BinaryFileIsNotText) {
  std::string m = csv_error(file_with("binary.csv", std::string("t,x\n0,1\n\0\0\0", 11)));
  EXPECT_NE(m.find("binary.csv:3: a NUL byte"), std::string::npos) << m;
}

TEST(InputFiles, TextFileIsBoundedAndDropsTheMark) {
  const std::string p = file_with("text.toml", kBom + "a = 1\n");
  EXPECT_EQ(ordex::read_text_file(p, "model file", 100), "a = 1\n");
  try {
    ordex::read_text_file(p, "model file", 4);
    FAIL() << "no size limit";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("too large for a model file"), std::string::npos) << e.what();
  }
}

}  // namespace
