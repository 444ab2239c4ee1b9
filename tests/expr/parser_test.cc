// Tests for common/expr/parser (and the lexer under it): precedence and
// associativity as trees, literal and escape decoding, and the exact error
// message, column included, for malformed expressions.
#include "common/expr/parser.h"

#include <doctest/doctest.h>

#include <string>

#include "common/expr/lexer.h"

namespace fanfold {
namespace {

// The tree of `text` in prefix form, or "!! message" for an error.
std::string Parsed(const std::string& text) {
  Result<AstNode> r = ParseExpr(text);
  if (!r.ok()) return "!! " + r.status().message();
  return AstToString(r.value());
}

struct Golden {
  const char* text;
  const char* expected;
};

}  // namespace

// Intent: each operator binds as the grammar's precedence table says, and
// binary operators associate to the left.
TEST_CASE("precedence and associativity") {
  const Golden cases[] = {
      {"1 + 2 * 3", "(+ 1 (* 2 3))"},
      {"(1 + 2) * 3", "(* (+ 1 2) 3)"},
      {"1 - 2 - 3", "(- (- 1 2) 3)"},
      {"8 / 4 / 2 % 3", "(% (/ (/ 8 4) 2) 3)"},
      {"-2 * 3", "(* (- 2) 3)"},
      {"- -{/power_w}", "(- (- {/power_w}))"},
      {"-{/a} % 3", "(% (- {/a}) 3)"},
      {"{/a} + 1 >= {/b} * 2", "(>= (+ {/a} 1) (* {/b} 2))"},
      {"{/a} == 1 and {/b} != 2 or {/c} < 3", "(or (and (== {/a} 1) (!= {/b} 2)) (< {/c} 3))"},
      {"{/a} or {/b} and {/c}", "(or {/a} (and {/b} {/c}))"},
      {"{/a} or {/b} or {/c}", "(or (or {/a} {/b}) {/c})"},
      {"not {/a} == 'x'", "(not (== {/a} 'x'))"},
      {"not {/a} and {/b}", "(and (not {/a}) {/b})"},
      {"not not {/a}", "(not (not {/a}))"},
      {"{/a} <= 1 or {/a} > 2 and {/a} >= 3", "(or (<= {/a} 1) (and (> {/a} 2) (>= {/a} 3)))"},
      {"{/a} + 1 in [2]", "(in (+ {/a} 1) [2])"},
      {"not {/event} in ['fault']", "(not (in {/event} ['fault']))"},
      {"{/event} not in []", "(not-in {/event} [])"},
  };
  for (const Golden& g : cases) {
    const std::string text = g.text;
    CAPTURE(text);
    CHECK(Parsed(text) == g.expected);
  }
}

// Intent: literals, field references, names and calls come out decoded.
TEST_CASE("operands and literals") {
  const Golden cases[] = {
      {"{/district} in ['north', 'east', -5, .5, 1e-3, true, null]",
       "(in {/district} ['north' 'east' -5 0.5 0.001 true null])"},
      {"lower({/fw/version}) == \"v2\"", "(== (lower {/fw/version}) 'v2')"},
      {"coalesce({/a}, {/b}, 'none')", "(coalesce {/a} {/b} 'none')"},
      {"has({/x}) and lacks({/y})", "(and (has {/x}) (lacks {/y}))"},
      {"substr({/lamp}, 0, 3)", "(substr {/lamp} 0 3)"},
      {"f()", "(f)"},
      {"{/readings/0} % 2", "(% {/readings/0} 2)"},
      {"status_class", "status_class"},
      {"x + y", "(+ x y)"},
      {"true or false", "(or true false)"},
      {"123 + 1.5 + 1e-3 + 2E+2", "(+ (+ (+ 123 1.5) 0.001) 200)"},
      {"And", "And"},  // keywords are lowercase only
      {"{ spaced name }", "{ spaced name }"},
      {" \t1\n", "1"},
  };
  for (const Golden& g : cases) {
    const std::string text = g.text;
    CAPTURE(text);
    CHECK(Parsed(text) == g.expected);
  }
}

// Intent: escapes inside strings and braces decode to the exact bytes.
TEST_CASE("escapes decode exactly") {
  Result<std::vector<Token>> t = Tokenize(R"('it\'s' "say \"hi\"\n\t\\" {a\}b\\c} {/a\b})");
  // The last field holds an unknown escape, so tokenizing stops there.
  CHECK_FALSE(t.ok());
  t = Tokenize(R"('it\'s' "say \"hi\"\n\t\\" {a\}b\\c})");
  REQUIRE(t.ok());
  REQUIRE(t->size() == 4);
  CHECK((*t)[0].kind == TokenKind::kString);
  CHECK((*t)[0].text == "it's");
  CHECK((*t)[1].text == "say \"hi\"\n\t\\");
  CHECK((*t)[2].kind == TokenKind::kField);
  CHECK((*t)[2].text == "a}b\\c");
  CHECK((*t)[2].column == 28);  // 27 bytes precede it
  CHECK((*t)[3].kind == TokenKind::kEnd);
  CHECK((*t)[3].column == 37);
}

// Intent: every error names the 1-based byte column, what was found and
// what was expected, in the documented form.
TEST_CASE("syntax errors: golden messages") {
  const Golden cases[] = {
      {"", "column 1: empty expression; expected an operand: a number, string, {field}, name, "
           "function call or '('"},
      {"   ", "column 1: empty expression; expected an operand: a number, string, {field}, name, "
              "function call or '('"},
      {"1 2", "column 3: number 2; expected an operator or the end of the expression"},
      {"{/a} == 1 )", "column 11: ')'; expected an operator or the end of the expression"},
      {"{/a} ==", "column 8: end of expression; expected an operand: a number, string, {field}, "
                  "name, function call or '('"},
      {"({/a} + 1", "column 10: end of expression; expected an operator or ')' to close '(' at "
                    "column 1"},
      {"'abc", "column 1: unclosed string; expected a closing ' before the end of the expression"},
      {"{/a} == \"abc\\", "column 9: unclosed string; expected a closing \" before the end of the "
                         "expression"},
      {"{/a", "column 1: unclosed field reference; expected '}' before the end of the expression"},
      {"{}", "column 1: empty field reference {}; expected a JSON Pointer or column name between "
             "the braces"},
      {"{/a\\x}", "column 4: unknown escape '\\x' in field reference; expected \\} or \\\\"},
      {"'a\\q'", "column 3: unknown escape '\\q' in string; expected one of \\' \\\" \\\\ \\n \\t"},
      {"1e", "column 1: malformed number '1e'; expected a decimal number such as 12, 1.5, .5 or "
             "1e-3"},
      {"x + 12abc", "column 5: malformed number '12abc'; expected a decimal number such as 12, "
                    "1.5, .5 or 1e-3"},
      {"1e999", "column 1: number 1e999 out of range; expected a number a double can hold"},
      {"{/a} = 1", "column 6: '='; expected '==' to compare for equality"},
      {"!{/a}", "column 1: '!'; expected '!=' (negation is spelled 'not')"},
      {"{/a} && {/b}", "column 6: unexpected character '&'; expected 'and' to combine conditions"},
      {"@", "column 1: unexpected character '@'; expected an operand, an operator or a "
            "parenthesis"},
      {"1 < 2 < 3", "column 7: '<' after a comparison; expected 'and', 'or' or parentheses "
                    "(comparisons do not chain)"},
      {"{/a} in 3", "column 9: number 3; expected '[' to start the list of literals after 'in'"},
      {"{/a} in [{/b}]", "column 10: field {/b}; expected a literal (number, string, true, false "
                         "or null) in the list"},
      {"{/a} in [1, 2", "column 14: end of expression; expected ',' or ']' to close the list "
                        "opened at column 9"},
      {"{/a} not {/b}", "column 10: field {/b}; expected 'in' after 'not' at column 6"},
      {"+1", "column 1: '+'; expected an operand: a number, string, {field}, name, function call "
             "or '('"},
      {"lower({/a} {/b})", "column 12: field {/b}; expected an operator, ',' or ')' to close the "
                           "call of lower at column 6"},
      {"a == not b", "column 6: keyword 'not'; expected an operand: a number, string, {field}, "
                     "name, function call or '('"},
      {"}", "column 1: '}' without a matching '{'; expected an operator or operand"},
  };
  for (const Golden& g : cases) {
    const std::string text = g.text;
    CAPTURE(text);
    CHECK(Parsed(text) == std::string("!! ") + g.expected);
  }
}

// Intent: hostile nesting fails with a message instead of exhausting the
// stack, while nesting within the limit still parses.
TEST_CASE("nesting depth is bounded") {
  const int n = kMaxExprDepth + 50;
  const std::string parens = std::string(n, '(') + "1" + std::string(n, ')');
  const std::string nots = [&] {
    std::string s;
    for (int i = 0; i < n; ++i) s += "not ";
    return s + "1";
  }();
  const std::string minuses = std::string(n, '-') + "1";
  const std::string sum = [&] {
    std::string s = "1";
    for (int i = 0; i < n; ++i) s += "+1";
    return s;
  }();
  for (const std::string& text : {parens, nots, minuses, sum}) {
    Result<AstNode> r = ParseExpr(text);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message().find("nested deeper than 200 levels") != std::string::npos);
  }
  const std::string ok = std::string(100, '(') + "1" + std::string(100, ')');
  CHECK(Parsed(ok) == "1");
}

// Intent: long literals are cut short in messages.
TEST_CASE("long tokens are abbreviated in messages") {
  const std::string text = "1 '" + std::string(100, 'x') + "'";
  CHECK(Parsed(text) == "!! column 3: string '" + std::string(39, 'x') +
                            "...; expected an operator or the end of the expression");
}

}  // namespace fanfold
