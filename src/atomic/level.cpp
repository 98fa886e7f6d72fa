#include "zeeline/atomic/level.hpp"

#include <cctype>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

// Term letters for L = 0..12; 'J' is skipped by convention.
constexpr const char* kTermLetters = "SPDFGHIKLMNOQ";

[[noreturn]] void Fail(const std::string& level, const std::string& token, const std::string& why) {
  if (token.empty() || token == level) throw LevelParseError("level '" + level + "': " + why);
  throw LevelParseError("level '" + level + "', token '" + token + "': " + why);
}

int LetterToL(char c, bool upper_case) {
  const char* p = std::strchr(kTermLetters, upper_case ? c : std::toupper(static_cast<unsigned char>(c)));
  if (c == '\0' || p == nullptr) return -1;
  if (!upper_case && !std::islower(static_cast<unsigned char>(c))) return -1;
  return static_cast<int>(p - kTermLetters);
}

// Parse a non-negative integer or n/2 into its doubled value; -1 on failure.
int ParseHalfInteger(const std::string& s) {
  if (s.empty()) return -1;
  const auto slash = s.find('/');
  auto all_digits = [](const std::string& t) {
    if (t.empty() || t.size() > 4) return false;
    for (char c : t)
      if (!std::isdigit(static_cast<unsigned char>(c))) return false;
    return true;
  };
  if (slash == std::string::npos) return all_digits(s) ? 2 * std::atoi(s.c_str()) : -1;
  const std::string num = s.substr(0, slash), den = s.substr(slash + 1);
  if (!all_digits(num) || den != "2") return -1;
  const int n = std::atoi(num.c_str());
  return (n % 2 == 1) ? n : -1;  // n/2 with n even must be written as an integer
}

bool InTriangle(int two_a, int two_b, int two_c) {
  return two_c >= std::abs(two_a - two_b) && two_c <= two_a + two_b && (two_a + two_b + two_c) % 2 == 0;
}

std::string RangeText(int two_a, int two_b) {
  return HalfIntegerText(std::abs(two_a - two_b)) + ".." + HalfIntegerText(two_a + two_b);
}

// "5D4", "2P3/2", "5Fo5" -> LsTerm; `level` is the whole designation for messages.
LsTerm ParseLsTerm(const std::string& token, const std::string& level) {
  std::size_t i = 0;
  while (i < token.size() && std::isdigit(static_cast<unsigned char>(token[i]))) ++i;
  if (i == 0) Fail(level, token, "expected an LS term such as 5D4 or 2P3/2: missing multiplicity 2S+1");
  if (i > 3) Fail(level, token, "multiplicity is implausibly large");
  const int multiplicity = std::atoi(token.substr(0, i).c_str());
  if (multiplicity < 1) Fail(level, token, "multiplicity 2S+1 must be at least 1");
  if (i >= token.size()) Fail(level, token, "missing the L letter (one of S P D F G H I K L M N O Q)");
  const int L = LetterToL(token[i], true);
  if (L < 0)
    Fail(level, token,
         std::string("'") + token[i] + "' is not an L letter (expected one of S P D F G H I K L M N O Q)");
  ++i;
  Parity parity = Parity::kUnstated;
  if (i < token.size() && (token[i] == 'o' || token[i] == '*' || token[i] == 'e')) {  // parity mark
    parity = token[i] == 'e' ? Parity::kEven : Parity::kOdd;
    ++i;
  }
  const std::string j_text = token.substr(i);
  if (j_text.empty()) Fail(level, token, "missing J after the term letter");
  const int two_J = ParseHalfInteger(j_text);
  if (two_J < 0) Fail(level, token, "J '" + j_text + "' is not a non-negative integer or n/2 with n odd (at most 4 digits)");
  LsTerm term{multiplicity - 1, L, two_J, parity};
  if (!InTriangle(2 * L, term.two_S, two_J))
    Fail(level, token,
         "J = " + HalfIntegerText(two_J) + " cannot be reached from L = " + std::to_string(L) +
             " and S = " + HalfIntegerText(term.two_S) + " (allowed J: " + RangeText(2 * L, term.two_S) +
             ")");
  return term;
}

std::vector<std::string> SplitArguments(const std::string& inner) {
  std::vector<std::string> out;
  std::string cur;
  for (char c : inner) {
    if (c == ',') {
      out.push_back(cur);
      cur.clear();
    } else {
      cur += c;
    }
  }
  out.push_back(cur);
  return out;
}

}  // namespace

char OrbitalLetter(int L, bool upper_case) {
  if (L < 0 || L >= static_cast<int>(std::strlen(kTermLetters))) return '?';
  const char c = kTermLetters[L];
  return upper_case ? c : static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
}

std::string HalfIntegerText(int twice_value) {
  if (twice_value % 2 == 0) return std::to_string(twice_value / 2);
  return std::to_string(twice_value) + "/2";
}

Level ParseLevel(const std::string& text) {
  Level level;
  level.text = text;
  if (text.empty()) Fail(text, "", "empty level designation");
  for (char c : text)
    if (std::isspace(static_cast<unsigned char>(c))) Fail(text, "", "spaces are not allowed in a level");

  std::string body = text;
  const auto colon = text.find(':');
  if (colon != std::string::npos) {
    body = text.substr(0, colon);
    const std::string suffix = text.substr(colon + 1);
    if (suffix.rfind("g=", 0) != 0) Fail(text, suffix, "expected ':g=<number>' after the level");
    const std::string number = suffix.substr(2);
    char* end = nullptr;
    errno = 0;
    const double g = std::strtod(number.c_str(), &end);
    if (number.empty() || *end != '\0' || errno == ERANGE || !std::isfinite(g))
      Fail(text, suffix, "measured g '" + number + "' is not a finite number");
    level.measured_g = g;
  }

  auto parse_wrapped = [&](const char* prefix) -> std::vector<std::string> {
    const std::size_t n = std::strlen(prefix);
    if (body.size() < n + 2 || body.back() != ')')
      Fail(text, body, std::string("expected ") + prefix + "...) with a closing parenthesis");
    return SplitArguments(body.substr(n, body.size() - n - 1));
  };

  if (body.rfind("jK(", 0) == 0) {
    level.coupling = Coupling::kJK;
    const auto args = parse_wrapped("jK(");
    if (args.size() != 4)
      Fail(text, body, "jK coupling needs 4 arguments: jK(core term, l, K, J), e.g. jK(2P3/2,p,5/2,2)");
    level.term = ParseLsTerm(args[0], text);
    if (args[1].size() != 1 || LetterToL(args[1][0], false) < 0)
      Fail(text, args[1], "outer electron's l must be one lower-case letter (s p d f g ...)");
    level.l = LetterToL(args[1][0], false);
    level.two_K = ParseHalfInteger(args[2]);
    if (level.two_K < 0) Fail(text, args[2], "K must be a non-negative integer or n/2 with n odd (at most 4 digits)");
    level.two_J = ParseHalfInteger(args[3]);
    if (level.two_J < 0) Fail(text, args[3], "J must be a non-negative integer or n/2 with n odd (at most 4 digits)");
    if (!InTriangle(level.term.two_J, 2 * level.l, level.two_K))
      Fail(text, args[2],
           "K = " + HalfIntegerText(level.two_K) + " cannot be reached from J1 = " +
               HalfIntegerText(level.term.two_J) + " and l = " + std::to_string(level.l) +
               " (allowed K: " + RangeText(level.term.two_J, 2 * level.l) + ")");
    if (!InTriangle(level.two_K, 1, level.two_J))
      Fail(text, args[3],
           "J = " + HalfIntegerText(level.two_J) + " cannot be reached from K = " +
               HalfIntegerText(level.two_K) + " and s = 1/2 (allowed J: " + RangeText(level.two_K, 1) + ")");
  } else if (body.rfind("jj(", 0) == 0) {
    level.coupling = Coupling::kJJ;
    const auto args = parse_wrapped("jj(");
    if (args.size() != 3)
      Fail(text, body, "jj coupling needs 3 arguments: jj(term1, term2, J), e.g. jj(2P1/2,2S1/2,1)");
    level.term = ParseLsTerm(args[0], text);
    level.second = ParseLsTerm(args[1], text);
    level.two_J = ParseHalfInteger(args[2]);
    if (level.two_J < 0) Fail(text, args[2], "J must be a non-negative integer or n/2 with n odd (at most 4 digits)");
    if (!InTriangle(level.term.two_J, level.second.two_J, level.two_J))
      Fail(text, args[2],
           "J = " + HalfIntegerText(level.two_J) + " cannot be reached from J1 = " +
               HalfIntegerText(level.term.two_J) + " and J2 = " + HalfIntegerText(level.second.two_J) +
               " (allowed J: " + RangeText(level.term.two_J, level.second.two_J) + ")");
  } else {
    if (body.find('(') != std::string::npos)
      Fail(text, body, "unknown coupling prefix: use jK(...) or jj(...), or an LS term such as 5D4");
    level.coupling = Coupling::kLS;
    level.term = ParseLsTerm(body, text);
    level.two_J = level.term.two_J;
  }
  return level;
}

std::string ElectricDipoleParityProblem(const Level& lower, const Level& upper) {
  auto parity = [](const Level& l) { return l.coupling == Coupling::kLS ? l.term.parity : Parity::kUnstated; };
  const Parity a = parity(lower), b = parity(upper);
  if (a == Parity::kUnstated || b == Parity::kUnstated || a != b) return "";
  const char* which = a == Parity::kOdd ? "odd" : "even";
  return "'" + lower.text + "' -> '" + upper.text + "': both levels are " + which +
         "; an electric-dipole line needs a parity change (Laporte's rule) -- check the parity marks";
}

}  // namespace zeeline
