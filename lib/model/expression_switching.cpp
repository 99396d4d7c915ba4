#include "model/expression_switching.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <initializer_list>

#include "io/errors.hpp"

namespace ordex {

namespace {

struct Token {
  enum Kind { Number, Name, Op, End } kind;
  std::string text;
  std::size_t begin, end;
};

std::vector<Token> tokenize(const std::string& s, const std::string& where) {
  std::vector<Token> out;
  std::size_t i = 0;
  const std::size_t n = s.size();
  auto digit = [](char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; };
  while (i < n) {
    const char c = s[i];
    if (std::isspace(static_cast<unsigned char>(c))) {
      ++i;
      continue;
    }
    const std::size_t b = i;
    if (digit(c) || (c == '.' && i + 1 < n && digit(s[i + 1]))) {
      while (i < n && (digit(s[i]) || s[i] == '.')) ++i;
      if (i < n && (s[i] == 'e' || s[i] == 'E')) {
        std::size_t j = i + 1;
        if (j < n && (s[j] == '+' || s[j] == '-')) ++j;
        if (j < n && digit(s[j])) {
          i = j;
          while (i < n && digit(s[i])) ++i;
        }
      }
      out.push_back({Token::Number, s.substr(b, i - b), b, i});
      continue;
    }
    if (std::isalpha(static_cast<unsigned char>(c)) || c == '_') {
      while (i < n && (std::isalnum(static_cast<unsigned char>(s[i])) || s[i] == '_')) ++i;
      out.push_back({Token::Name, s.substr(b, i - b), b, i});
      continue;
    }
    static const char* two[] = {"<=", ">=", "==", "!=", "&&", "||"};
    bool matched = false;
    for (const char* op : two)
      if (s.compare(i, 2, op) == 0) {
        out.push_back({Token::Op, op, b, b + 2});
        i += 2;
        matched = true;
        break;
      }
    if (matched) continue;
    if (std::string("+-*/^(),?:<>").find(c) == std::string::npos)
      throw InputError(where + ": cannot read '" + std::string(1, c) + "' in '" + s + "'");
    out.push_back({Token::Op, std::string(1, c), b, b + 1});
    ++i;
  }
  out.push_back({Token::End, "", n, n});
  return out;
}

/// A parsed operand: its span in the text and whether it is a comparison or logical result.
struct Span {
  std::size_t begin = 0, end = 0;
  bool boolean = false;
};

// Recursive descent over the expression grammar, recording switching functions as it goes.
// Precedence, loosest first: ?: (right), ||, &&, comparisons, + -, * /, unary -, ^ (right).
class Splitter {
 public:
  Splitter(const std::string& s, const std::string& where) : s_(s), where_(where), t_(tokenize(s, where)) {}

  std::vector<SwitchingFunction> run() {
    Span e = ternary();
    if (peek().kind != Token::End) fail();
    (void)e;
    return out_;
  }

 private:
  const Token& peek() const { return t_[k_]; }
  bool is(const char* op) const { return peek().kind == Token::Op && peek().text == op; }
  [[noreturn]] void fail() const {
    throw InputError(where_ + ": cannot find the structure of '" + s_ + "' near position " +
                     std::to_string(peek().begin + 1));
  }
  std::string text(const Span& sp) const { return s_.substr(sp.begin, sp.end - sp.begin); }
  void add(SwitchKind kind, const std::string& fn, const std::string& construct) {
    for (const auto& f : out_)
      if (f.kind == kind && f.text == fn) return;
    out_.push_back({kind, fn, construct});
  }
  void nonzero(const Span& c) {
    if (!c.boolean) add(SwitchKind::Nonzero, text(c), text(c));
  }

  Span ternary() {
    Span c = logical_or();
    if (!is("?")) return c;
    ++k_;
    nonzero(c);
    Span a = ternary();
    if (!is(":")) fail();
    ++k_;
    Span b = ternary();
    return {c.begin, b.end, a.boolean && b.boolean};
  }
  /// A left-associative level: NEXT (OP NEXT)*; logical levels watch non-comparison operands.
  Span level(std::initializer_list<const char*> ops, Span (Splitter::*next)(), bool logical) {
    Span l = (this->*next)();
    auto at_op = [&] {
      for (const char* op : ops)
        if (is(op)) return true;
      return false;
    };
    while (at_op()) {
      ++k_;
      Span r = (this->*next)();
      if (logical) {
        nonzero(l);
        nonzero(r);
      }
      l = {l.begin, r.end, logical};
    }
    return l;
  }
  Span logical_or() { return level({"||"}, &Splitter::logical_and, true); }
  Span logical_and() { return level({"&&"}, &Splitter::comparison, true); }
  Span comparison() {
    Span l = additive();
    while (is("<") || is("<=") || is(">") || is(">=") || is("==") || is("!=")) {
      ++k_;
      Span r = additive();
      add(SwitchKind::Sign, "(" + text(l) + ")-(" + text(r) + ")", text({l.begin, r.end}));
      l = {l.begin, r.end, true};
    }
    return l;
  }
  Span additive() { return level({"+", "-"}, &Splitter::multiplicative, false); }
  Span multiplicative() { return level({"*", "/"}, &Splitter::unary, false); }
  Span unary() {
    if (is("-") || is("+")) {
      const std::size_t b = peek().begin;
      ++k_;
      Span o = unary();
      return {b, o.end, false};
    }
    return power();
  }
  Span power() {
    Span base = primary();
    if (is("^")) {
      ++k_;
      Span e = unary();
      return {base.begin, e.end, false};
    }
    return base;
  }
  Span primary() {
    const Token tok = peek();
    if (tok.kind == Token::Number) {
      ++k_;
      return {tok.begin, tok.end, false};
    }
    if (tok.kind == Token::Name) {
      ++k_;
      if (!is("(")) return {tok.begin, tok.end, false};
      ++k_;
      std::vector<Span> args;
      if (!is(")")) {
        args.push_back(ternary());
        while (is(",")) {
          ++k_;
          args.push_back(ternary());
        }
      }
      if (!is(")")) fail();
      const std::size_t end = peek().end;
      ++k_;
      const std::string call = s_.substr(tok.begin, end - tok.begin);
      if (tok.text == "abs" && args.size() == 1) add(SwitchKind::Sign, text(args[0]), call);
      if (tok.text == "floor" && args.size() == 1) add(SwitchKind::Floor, text(args[0]), call);
      if ((tok.text == "min" || tok.text == "max") && args.size() >= 2)
        for (std::size_t a = 0; a < args.size(); ++a)
          for (std::size_t b = a + 1; b < args.size(); ++b)
            add(SwitchKind::Sign, "(" + text(args[a]) + ")-(" + text(args[b]) + ")", call);
      return {tok.begin, end, false};
    }
    if (tok.kind == Token::Op && tok.text == "(") {
      ++k_;
      Span inner = ternary();
      if (!is(")")) fail();
      const std::size_t end = peek().end;
      ++k_;
      return {tok.begin, end, inner.boolean};
    }
    fail();
  }

  const std::string& s_;
  const std::string& where_;
  std::vector<Token> t_;
  std::size_t k_ = 0;
  std::vector<SwitchingFunction> out_;
};

}  // namespace

std::vector<SwitchingFunction> switching_functions(const std::string& text, const std::string& where) {
  return Splitter(text, where).run();
}

double switch_level(SwitchKind kind, double value) {
  switch (kind) {
    case SwitchKind::Sign: return value > 0 ? 1.0 : value < 0 ? -1.0 : 0.0;
    case SwitchKind::Floor: return std::floor(value);
    case SwitchKind::Nonzero: return value != 0 ? 1.0 : 0.0;
  }
  return 0.0;
}

}  // namespace ordex
