// The line-list reader: a good list, the bundled demo list, and malformed lists with the line/column named.
#include "zeeline/atomic/line_list.hpp"

#include <string>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/atomic/lande.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

const char* kGood =
    "# test list\n"
    "name,wavelength,frame,species,lower,upper,g_lower,g_upper,mass_amu,einstein_A\n"
    "a,630.2494nm,air,Fe I,5P1,5D0,,,55.845,\n"
    "b,6402.246A,air,Ne I,jK(2P3/2,s,3/2,2),jK(2P3/2,p,5/2,3),1.503,1.329,20.18,5.1e7\n";

TEST(LineList, ReadsColumnsAndOptionalCells) {
  const auto lines = ParseLineList(kGood, "good.csv");
  ASSERT_EQ(lines.size(), 2u);
  EXPECT_EQ(lines[0].name, "a");
  EXPECT_CLOSE(lines[0].wavelength_nm, 630.2494, 1e-15);
  EXPECT_EQ(lines[0].frame, WavelengthFrame::kAir);
  EXPECT_FALSE(lines[0].lower.measured_g.has_value());
  EXPECT_CLOSE(*lines[0].mass_amu, 55.845, 1e-15);
  EXPECT_FALSE(lines[0].einstein_A_per_s.has_value());
  EXPECT_CLOSE(lines[1].wavelength_nm, 640.2246, 1e-14);
  EXPECT_EQ(*lines[1].upper.measured_g, 1.329);
  EXPECT_EQ(LandeG(lines[1].lower), 1.503);
  EXPECT_EQ(lines[1].source_line, 4);
}

// A list saved by a spreadsheet starts with the UTF-8 byte-order mark EF BB BF (Unicode Standard sect.
// 23.8, RFC 3629 sect. 6): it is not part of the first column name.
TEST(LineList, Utf8ByteOrderMarkBeforeTheHeaderIsSkipped) {
  const std::string with_bom = std::string("\xEF\xBB\xBF") +
                               "name,wavelength,frame,species,lower,upper\n"
                               "a,630.2494nm,air,Fe I,5P1,5D0\n";
  const auto lines = ParseLineList(with_bom, "bom.csv");
  ASSERT_EQ(lines.size(), 1u);
  EXPECT_EQ(lines[0].name, "a");
  EXPECT_CLOSE(lines[0].wavelength_nm, 630.2494, 1e-15);
}

TEST(LineList, BundledDemoListParses) {
  const auto lines = ReadLineList(std::string(ZEELINE_SOURCE_DIR) + "/demo_maps/lines.csv");
  EXPECT_GE(lines.size(), 5u);
  EXPECT_NO_THROW(FindLine(lines, "FeI_6302", "lines.csv"));
}

struct BadList {
  const char* text;
  const char* must_mention;
};
class MalformedLineList : public ::testing::TestWithParam<BadList> {};

TEST_P(MalformedLineList, NamesTheLineAndColumn) {
  try {
    ParseLineList(GetParam().text, "bad.csv");
    FAIL() << "accepted: " << GetParam().text;
  } catch (const LineListError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find(GetParam().must_mention), std::string::npos) << msg;
    EXPECT_NE(msg.find("bad.csv"), std::string::npos) << msg;
  }
}

INSTANTIATE_TEST_SUITE_P(
    Table, MalformedLineList,
    ::testing::Values(
        BadList{"", "no header"},
        BadList{"name,wavelength,frame,species,lower\n", "'upper'"},
        BadList{"name,wavelength,frame,species,lower,upper,colour\n", "unknown column 'colour'"},
        BadList{"name,wavelength,frame,species,lower,upper\n", "no lines"},
        BadList{"name,wavelength,frame,species,lower,upper\na,630nm,air,Fe I,5P1\n", "bad.csv:2"},
        BadList{"name,wavelength,frame,species,lower,upper\na,630parsecs,air,Fe I,5P1,5D0\n",
                "bad.csv:2 column 'wavelength'"},
        BadList{"name,wavelength,frame,species,lower,upper\na,630nm,water,Fe I,5P1,5D0\n", "column 'frame'"},
        BadList{"name,wavelength,frame,species,lower,upper\na,630nm,air,Fe I,5P9,5D0\n", "column 'lower'"},
        BadList{"name,wavelength,frame,species,lower,upper,g_upper\na,630nm,air,Fe I,5P1,5D0,x\n",
                "column 'g_upper'"},
        BadList{"name,wavelength,frame,species,lower,upper,mass_amu\na,630nm,air,Fe I,5P1,5D0,-3\n",
                "column 'mass_amu'"},
        BadList{"name,wavelength,frame,species,lower,upper\na,630nm,air,Fe I,5P1,5D0\na,631nm,air,Fe I,5P1,5D0\n",
                "already used on line 2"},
        BadList{"name,wavelength,frame,species,lower,upper\na,,air,Fe I,5P1,5D0\n", "required cell is empty"}));

TEST(LineList, MissingFileIsNamed) {
  try {
    ReadLineList("/nonexistent/lines.csv");
    FAIL();
  } catch (const LineListError& e) {
    EXPECT_NE(std::string(e.what()).find("/nonexistent/lines.csv"), std::string::npos);
  }
}

}  // namespace
}  // namespace zeeline
