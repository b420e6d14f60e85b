// RFC 4180 records (util/csv.h): the cases of RFC 4180 §2 that run outputs can contain.
#include "util/csv.h"

#include <gtest/gtest.h>

namespace hallwright {
namespace {

TEST(Csv, QuotedFieldsHoldCommasQuotesAndNewlines) {
    // RFC 4180 §2.5-2.7: quoted fields, doubled quotes, line breaks inside quotes; CRLF ends.
    const std::string text = "a,b,c\r\n\"x, y\",\"say \"\"hi\"\"\",\"two\nlines\"\n\n1,,3\n";
    std::vector<CsvRecord> rows;
    Diagnostics diag;
    ASSERT_TRUE(ParseCsv(text, "t.csv", rows, diag)) << diag.ToString();
    ASSERT_EQ(rows.size(), 3u);  // the blank line is skipped
    EXPECT_EQ(rows[0].fields, (std::vector<std::string>{"a", "b", "c"}));
    EXPECT_EQ(rows[1].fields, (std::vector<std::string>{"x, y", "say \"hi\"", "two\nlines"}));
    EXPECT_EQ(rows[1].line, 2);
    EXPECT_EQ(rows[2].fields, (std::vector<std::string>{"1", "", "3"}));
    EXPECT_EQ(rows[2].line, 5);  // counts the line inside the quoted field and the blank line
}

TEST(Csv, UnclosedQuoteIsAnErrorAtItsRecord) {
    std::vector<CsvRecord> rows;
    Diagnostics diag;
    EXPECT_FALSE(ParseCsv("a,b\n1,\"open\n2,3\n", "t.csv", rows, diag));
    ASSERT_TRUE(diag.HasErrors());
    EXPECT_EQ(diag.Items()[0].at.file, "t.csv");
    EXPECT_EQ(diag.Items()[0].at.line, 2);
}

}  // namespace
}  // namespace hallwright
