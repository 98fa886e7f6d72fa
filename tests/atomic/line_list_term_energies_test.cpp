// Line-list columns lower_term_energies / upper_term_energies (docs/line_list.md): read, checked against the
// level's LS term on reading, errors naming the file, line and column.
#include <string>

#include <gtest/gtest.h>

#include "zeeline/atomic/line_list.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

// Li I 2p 2P energies 14903.66 / 14904.00 cm^-1 (from memory); a 3P term on the interval rule (invented).
const char* kHeader = "name,wavelength,frame,species,lower,upper,lower_term_energies,upper_term_energies\n";

TEST(LineListTermEnergies, ReadsBothColumns) {
  const std::string text = std::string(kHeader) +
                           "li,670.791nm,air,Li I,2S1/2,2Po3/2,,1/2=14903.66;3/2=14904.00\n"
                           "tri,517nm,air,X I,3P1,3S1,0=-40;1=-20;2=20,\n";
  const auto lines = ParseLineList(text, "t.csv");
  ASSERT_EQ(lines.size(), 2u);
  EXPECT_TRUE(lines[0].lower_term_energies.empty());
  ASSERT_EQ(lines[0].upper_term_energies.size(), 2u);
  EXPECT_EQ(lines[0].upper_term_energies[1].two_J, 3);
  EXPECT_DOUBLE_EQ(lines[0].upper_term_energies[1].energy_cm1, 14904.00);
  ASSERT_EQ(lines[1].lower_term_energies.size(), 3u);
  EXPECT_DOUBLE_EQ(lines[1].lower_term_energies[0].energy_cm1, -40.0);
}

TEST(LineListTermEnergies, RefusesIncompleteOrWrongEnergiesNamingTheColumn) {
  struct Bad {
    const char* row;
    const char* column;
    const char* reason;
  };
  for (const Bad& b : {Bad{"a,670nm,air,Li I,2S1/2,2Po3/2,,3/2=14904.00\n", "upper_term_energies", "J = 1/2"},
                       Bad{"a,670nm,air,Li I,2S1/2,2Po3/2,,1/2=1;3/2=2;5/2=3\n", "upper_term_energies", "J = 5/2"},
                       Bad{"a,670nm,air,Li I,2S1/2,2Po3/2,1/2=x,\n", "lower_term_energies", "finite number"},
                       Bad{"a,670nm,air,Li I,2S1/2,2Po3/2,,1/2=1;3/2=1\n", "upper_term_energies", "same energy"},
                       Bad{"a,670nm,air,Ne I,jK(2P3/2,s,3/2,2),2Po3/2,1/2=0,\n", "lower_term_energies", "LS term"}}) {
    try {
      ParseLineList(std::string(kHeader) + b.row, "bad.csv");
      ADD_FAILURE() << "accepted " << b.row;
    } catch (const LineListError& e) {
      const std::string msg = e.what();
      EXPECT_NE(msg.find("bad.csv:2 column '" + std::string(b.column) + "'"), std::string::npos) << msg;
      EXPECT_NE(msg.find(b.reason), std::string::npos) << msg;
    }
  }
}

}  // namespace
}  // namespace zeeline
