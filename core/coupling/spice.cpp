#include "core/coupling/spice.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>

#include "core/input/error.hpp"
#include "core/input/input_file.hpp"
#include "core/input/text.hpp"

namespace spurcast {

namespace {

struct Token {
  std::string text;  ///< lower case
  std::string original;
  int line = 0;
  int column = 0;
};

/// One logical line (continuations joined), its tokens with their own positions.
struct Card {
  std::vector<Token> tokens;
};

/// Shows a name in a message: printable ASCII as is, anything else escaped, at most 24 characters.
std::string shown(std::string_view text) { return quoted_for_message(text, 24); }

const char* const pin_port[5] = {"in+", "in-", "out+", "out-", "ground"};
const char* const pin_role[5] = {"LISN-side +", "LISN-side -", "converter-side +",
                                 "converter-side -", "ground"};

}  // namespace

bool parse_spice_value(std::string_view text, double& value) {
  std::size_t i = 0;
  std::string number;
  if (i < text.size() && (text[i] == '+' || text[i] == '-')) number += text[i++];
  bool digits = false;
  while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i])))
    number += text[i++], digits = true;
  if (i < text.size() && text[i] == '.') {
    number += text[i++];
    while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i])))
      number += text[i++], digits = true;
  }
  if (!digits) return false;
  // An exponent only when 'e' is followed by digits (optionally signed).
  if (i < text.size() && (text[i] == 'e' || text[i] == 'E')) {
    std::size_t j = i + 1;
    if (j < text.size() && (text[j] == '+' || text[j] == '-')) ++j;
    if (j < text.size() && std::isdigit(static_cast<unsigned char>(text[j]))) {
      number += 'e';
      number += text.substr(i + 1, j - i - 1);
      i = j;
      while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i])))
        number += text[i++];
    }
  }
  const std::string suffix = ascii_lower(text.substr(i));
  for (const char c : suffix) {
    if (!std::isalpha(static_cast<unsigned char>(c))) return false;
  }
  double scale = 1.0;
  // The longer suffixes first: "meg" and "mil" before "m" (SPICE2 scale factors).
  if (suffix.rfind("meg", 0) == 0) {
    scale = 1e6;
  } else if (suffix.rfind("mil", 0) == 0) {
    scale = 25.4e-6;
  } else if (!suffix.empty()) {
    switch (suffix[0]) {
      case 'f':
        scale = 1e-15;
        break;
      case 'p':
        scale = 1e-12;
        break;
      case 'n':
        scale = 1e-9;
        break;
      case 'u':
        scale = 1e-6;
        break;
      case 'm':
        scale = 1e-3;
        break;
      case 'k':
        scale = 1e3;
        break;
      case 'g':
        scale = 1e9;
        break;
      case 't':
        scale = 1e12;
        break;
      default:
        scale = 1.0;
        break;  // other letters are units, ignored ("10V", "5Ohm")
    }
  }
  char* end = nullptr;
  const double mantissa = std::strtod(number.c_str(), &end);
  if (end != number.c_str() + number.size()) return false;
  value = mantissa * scale;
  return std::isfinite(value);
}

std::vector<NetlistElement> parse_spice_subcircuit(std::string_view text, const std::string& file,
                                                   const std::string& subckt) {
  auto fail = [&](const Token& token, const std::string& message) {
    return Error(SourcePosition{file, token.line, token.column}, message);
  };

  // 1. Cards: comments removed, continuation lines joined.
  std::vector<Card> cards;
  int line_count = 0;
  for_each_line(text, ';', [&](int line_number, std::string_view line) {
    line_count = line_number;
    std::size_t first = 0;
    while (first < line.size() && (line[first] == ' ' || line[first] == '\t' || line[first] == '\r')) ++first;
    if (first >= line.size()) return;
    if (line[first] == '*') return;
    const bool continuation = line[first] == '+';
    if (line_number == 1 && line[first] != '.' && !continuation) return;  // the title line
    std::vector<Token> tokens;
    const std::size_t offset = continuation ? first + 1 : first;
    for (const LineWord& word : split_words(line.substr(offset), ",()")) {
      tokens.push_back(Token{ascii_lower(word.text), std::string(word.text), line_number,
                             word.column + static_cast<int>(offset)});
    }
    if (continuation) {
      if (cards.empty()) {
        throw Error(SourcePosition{file, line_number, static_cast<int>(first + 1)},
                    "expected a line to continue before '+'");
      }
      cards.back().tokens.insert(cards.back().tokens.end(), tokens.begin(), tokens.end());
    } else if (!tokens.empty()) {
      cards.push_back(Card{std::move(tokens)});
    }
  });

  // 2. Subcircuits.
  struct Parsed {
    std::vector<NetlistElement> elements;
    Token header;
  };
  std::map<std::string, Parsed> found;
  const std::string wanted = ascii_lower(subckt);
  bool in_subckt = false;
  bool ended = false;
  std::string current;
  std::vector<Token> pins;
  std::map<std::string, std::string> node_of;  // SPICE node → netlist node name
  std::vector<NetlistElement> elements;
  std::map<std::string, std::size_t> inductor_index;  // L name → index in elements
  std::map<std::string, Token> inductor_token;
  std::vector<std::pair<Token, std::vector<Token>>> couplings;  // K cards, resolved at .ends
  Token header;

  auto node_name = [&](const Token& token) -> std::string {
    if (token.text == "0" || token.text == "gnd") return "ground";
    const auto it = node_of.find(token.text);
    if (it != node_of.end()) return it->second;
    return "n:" + token.text;
  };

  for (const Card& card : cards) {
    const Token& head = card.tokens.front();
    if (ended) throw fail(head, "expected nothing after .end, found " + shown(head.original));
    if (head.text[0] == '.') {
      if (head.text == ".subckt") {
        if (in_subckt)
          throw fail(head,
                     "expected .ends before another .subckt (nested subcircuits are not read)");
        if (card.tokens.size() != 7) {
          throw fail(
              head,
              "expected '.subckt name' and five pins (LISN-side +, LISN-side -, converter-side +, "
              "converter-side -, ground), found " +
                  std::to_string(card.tokens.size() < 2 ? 0 : card.tokens.size() - 2) + " pins");
        }
        in_subckt = true;
        header = card.tokens[1];
        current = card.tokens[1].text;
        if (found.count(current) != 0)
          throw fail(card.tokens[1],
                     "subcircuit " + shown(card.tokens[1].original) + " is defined twice");
        pins.assign(card.tokens.begin() + 2, card.tokens.end());
        node_of.clear();
        elements.clear();
        inductor_index.clear();
        inductor_token.clear();
        couplings.clear();
        for (std::size_t p = 0; p < 5; ++p) {
          const Token& pin = pins[p];
          if ((pin.text == "0" || pin.text == "gnd") && p != 4) {
            throw fail(pin, "pin " + std::to_string(p + 1) + " (" + pin_role[p] +
                                ") is the ground node " + shown(pin.original));
          }
          const auto it = node_of.find(pin.text);
          if (it == node_of.end()) {
            if (p == 4) {
              node_of[pin.text] = "ground";
            } else {
              node_of[pin.text] = pin_port[p];
            }
            continue;
          }
          // A repeated node joins a line's two sides (pins 1 and 3, or 2 and 4) and nothing else.
          const bool pass_through =
              (p == 2 && it->second == "in+") || (p == 3 && it->second == "in-");
          if (!pass_through) {
            throw fail(pin, "pin " + std::to_string(p + 1) + " (" + pin_role[p] +
                                ") repeats node " + shown(pin.original) +
                                "; only a line's two sides may share a node");
          }
        }
        continue;
      }
      if (head.text == ".ends") {
        if (!in_subckt) throw fail(head, "expected .subckt before .ends");
        if (card.tokens.size() > 2 || (card.tokens.size() == 2 && card.tokens[1].text != current)) {
          throw fail(card.tokens.back(), "expected '.ends' or '.ends " + header.original +
                                             "', found " + shown(card.tokens.back().original));
        }
        // Couplings replace their two inductors by one coupled pair.
        std::vector<bool> coupled(elements.size(), false);
        std::vector<NetlistElement> pairs;
        for (const auto& [k_token, args] : couplings) {
          std::size_t index[2] = {0, 0};
          for (int w = 0; w < 2; ++w) {
            const auto it = inductor_index.find(args[static_cast<std::size_t>(w)].text);
            if (it == inductor_index.end()) {
              throw fail(args[static_cast<std::size_t>(w)],
                         "element " + shown(k_token.original) + ": no inductor " +
                             shown(args[static_cast<std::size_t>(w)].original) + " in subcircuit " +
                             shown(header.original));
            }
            index[w] = it->second;
          }
          if (index[0] == index[1])
            throw fail(args[1],
                       "element " + shown(k_token.original) + " couples an inductor with itself");
          for (const std::size_t i : index) {
            if (coupled[i]) {
              throw fail(k_token, "element " + shown(k_token.original) + ": inductor " +
                                      shown(elements[i].from_2) +
                                      " is already coupled (only pairs are read)");
            }
            coupled[i] = true;
          }
          double k = 0.0;
          if (!parse_spice_value(args[2].text, k)) {
            throw fail(args[2], "element " + shown(k_token.original) +
                                    ": expected a coupling factor, found " +
                                    shown(args[2].original));
          }
          if (!(k >= 0.0 && k < 1.0)) {
            throw fail(args[2], "element " + shown(k_token.original) +
                                    ": expected a coupling factor in [0, 1), found " +
                                    shown(args[2].original));
          }
          const NetlistElement& l1 = elements[index[0]];
          const NetlistElement& l2 = elements[index[1]];
          NetlistElement pair;
          pair.type = 'K';
          pair.from = l1.from;
          pair.to = l1.to;
          pair.from_2 = l2.from;
          pair.to_2 = l2.to;
          pair.value = l1.value;
          pair.value_2 = l2.value;
          pair.coupling = k;
          pair.where = SourcePosition{file, k_token.line, k_token.column};
          pairs.push_back(pair);
        }
        std::vector<NetlistElement> kept;
        for (std::size_t i = 0; i < elements.size(); ++i) {
          if (!coupled[i]) kept.push_back(elements[i]);
        }
        kept.insert(kept.end(), pairs.begin(), pairs.end());
        for (auto& element : kept)
          element.from_2 = element.type == 'K' ? element.from_2 : std::string();
        // Every pin but the ground, and but a repeated one, must reach an element.
        for (std::size_t p = 0; p < 4; ++p) {
          const std::string& port = node_of[pins[p].text];
          if (pins[p].text == pins[p < 2 ? p + 2 : p - 2].text)
            continue;  // a repeated node: the line passes through
          const bool used = std::any_of(kept.begin(), kept.end(), [&](const NetlistElement& e) {
            return e.from == port || e.to == port || e.from_2 == port || e.to_2 == port;
          });
          if (!used) {
            throw fail(pins[p], "pin " + std::to_string(p + 1) + " (" + pin_role[p] + ") " +
                                    shown(pins[p].original) + " reaches no element; give pin " +
                                    std::to_string(p < 2 ? p + 3 : p - 1) +
                                    "'s node to pass the line through");
          }
        }
        if (kept.empty())
          throw fail(header, "subcircuit " + shown(header.original) + " has no elements");
        found[current] = Parsed{kept, header};
        in_subckt = false;
        continue;
      }
      if (head.text == ".end") {
        if (in_subckt) throw fail(head, "expected .ends before .end");
        ended = true;
        continue;
      }
      throw fail(head,
                 "expected .subckt, .ends or .end, found " + shown(head.original) + " (not read)");
    }
    const char letter = head.text[0];
    if (!in_subckt) {
      throw fail(head, "element " + shown(head.original) +
                           " is outside a subcircuit (only .subckt definitions are read)");
    }
    if (letter != 'r' && letter != 'l' && letter != 'c' && letter != 'k') {
      throw fail(head, "element " + shown(head.original) +
                           " is not read (only R, L, C and K elements are)");
    }
    if (card.tokens.size() != 4) {
      const std::string expected =
          letter == 'k' ? "two inductor names and a coupling factor" : "two nodes and a value";
      const Token& at = card.tokens.size() > 4 ? card.tokens[4] : head;
      throw fail(at, "element " + shown(head.original) + ": expected " + expected +
                         (card.tokens.size() > 4 ? ", found more: " + shown(card.tokens[4].original)
                                                 : ""));
    }
    if (letter == 'k') {
      couplings.emplace_back(head,
                             std::vector<Token>{card.tokens[1], card.tokens[2], card.tokens[3]});
      continue;
    }
    NetlistElement e;
    e.type = static_cast<char>(std::toupper(static_cast<unsigned char>(letter)));
    e.from = node_name(card.tokens[1]);
    e.to = node_name(card.tokens[2]);
    e.where = SourcePosition{file, head.line, head.column};
    if (!parse_spice_value(card.tokens[3].text, e.value)) {
      throw fail(card.tokens[3], "element " + shown(head.original) + ": expected a value, found " +
                                     shown(card.tokens[3].original));
    }
    if (!(e.value > 0.0)) {
      throw fail(card.tokens[3], "element " + shown(head.original) +
                                     ": expected a value > 0, found " +
                                     shown(card.tokens[3].original));
    }
    if (e.from == e.to)
      throw fail(card.tokens[2], "element " + shown(head.original) + " connects a node to itself");
    // SPICE parts are ideal: the parasitics are elements of the netlist.
    e.winding_capacitance_f = 0.0;
    e.core_loss_resistance_ohm = no_core_loss;
    if (letter == 'l') {
      if (inductor_index.count(head.text) != 0)
        throw fail(head, "element " + shown(head.original) + " is defined twice");
      inductor_index[head.text] = elements.size();
      e.from_2 = head.original;  // kept for messages until the couplings are resolved
    }
    elements.push_back(e);
  }
  if (in_subckt) {
    throw Error(SourcePosition{file, line_count, 0},
                "expected .ends for subcircuit " + shown(header.original));
  }
  const auto it = found.find(wanted);
  if (it == found.end()) {
    std::string names;
    for (const auto& [name, parsed] : found)
      names += (names.empty() ? "" : ", ") + parsed.header.original;
    throw Error(SourcePosition{file, 0, 0},
                "no subcircuit '" + subckt + "'" +
                    (names.empty() ? std::string(" (the file defines none)")
                                   : " (the file defines " + names + ")"));
  }
  return it->second.elements;
}

std::vector<NetlistElement> load_spice_subcircuit(const std::string& path,
                                                  const std::string& subckt) {
  // A regular file of bounded size only, as for every loader (core/input/input_file.hpp).
  return parse_spice_subcircuit(read_input_file(path, "SPICE netlist", max_csv_file_bytes), path, subckt);
}

}  // namespace spurcast
