// The project's own pages are what its comments cite: every `docs/references.md §N` and
// `docs/design.md §N` written in core/, cli/, tests/ (the fuzz corpus aside: it is mutated input),
// limits/, examples/, README.md and DEVELOPERS.md must name a heading that exists in that page, and
// `§10 item N` an item of the check-value list. Citations of the team's working notes by their own
// file names (outside docs/) are refused: a reader of the repository cannot follow them.
// Common practice: a cross-reference that no check follows goes stale silently.
#include <doctest/doctest.h>

#include <algorithm>
#include <cctype>
#include <filesystem>
#include <set>
#include <string>
#include <string_view>
#include <vector>

#include "cli_support.hpp"

namespace fs = std::filesystem;

namespace {

using spurcast::test::read_text;

const std::string section_sign = "\xC2\xA7";  // "§" in UTF-8

/// The sections of one page: heading numbers ("1", "1.4a", "10") and the items of §10's list.
struct Page {
  std::vector<std::string> headings;  ///< in the order they appear
  std::set<int> check_items;          ///< "N." list items under the heading "10"
};

bool is_digit(char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; }

/// A section number at `text[at]`: digits, dot-separated groups, one optional lowercase letter
/// ("1", "1.4", "1.4a"). A trailing dot (end of a sentence, "1." of a heading) is not part of it.
std::string number_at(std::string_view text, std::size_t at) {
  std::size_t end = at;
  while (end < text.size() && is_digit(text[end])) ++end;
  if (end == at) return "";
  while (end + 1 < text.size() && text[end] == '.' && is_digit(text[end + 1])) {
    ++end;
    while (end < text.size() && is_digit(text[end])) ++end;
  }
  if (end < text.size() && text[end] >= 'a' && text[end] <= 'z' &&
      (end + 1 == text.size() || !std::isalnum(static_cast<unsigned char>(text[end + 1])))) {
    ++end;
  }
  return std::string(text.substr(at, end - at));
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t end = text.find('\n', start);
    lines.push_back(text.substr(start, end == std::string::npos ? std::string::npos : end - start));
    if (end == std::string::npos) break;
    start = end + 1;
  }
  return lines;
}

/// Markdown headings `## 1. Title`, `### 1.4a Title` (a `§` before the number is allowed).
Page parse_page(const std::string& text) {
  Page page;
  bool in_check_list = false;
  bool in_code = false;
  for (const std::string& line : lines_of(text)) {
    if (line.rfind("```", 0) == 0) in_code = !in_code;
    if (in_code) continue;
    if (!line.empty() && line[0] == '#') {
      std::size_t at = line.find_first_not_of('#');
      at = line.find_first_not_of(' ', at);
      if (at != std::string::npos && line.compare(at, section_sign.size(), section_sign) == 0) {
        at += section_sign.size();
      }
      const std::string number = at == std::string::npos ? "" : number_at(line, at);
      if (!number.empty()) {
        page.headings.push_back(number);
        in_check_list = number == "10";
      } else if (line.rfind("## ", 0) == 0) {
        in_check_list = false;  // an unnumbered chapter ends §10
      }
      continue;
    }
    if (in_check_list) {
      const std::string item = number_at(line, 0);
      if (!item.empty() && item.find('.') == std::string::npos && line.size() > item.size() &&
          line[item.size()] == '.') {
        page.check_items.insert(std::stoi(item));
      }
    }
  }
  return page;
}

/// Skips blanks at `at`; returns the new position.
std::size_t skip_blanks(std::string_view text, std::size_t at) {
  while (at < text.size() && (text[at] == ' ' || text[at] == '\t')) ++at;
  return at;
}

/// If `text[at]` starts with `word`, the position after it, else npos.
std::size_t after(std::string_view text, std::size_t at, std::string_view word) {
  return text.substr(at, word.size()) == word ? at + word.size() : std::string_view::npos;
}

/// One section cited in a text.
struct Citation {
  std::string page;     ///< "references" or "design"
  std::string section;  ///< "4.2"; for an item of §10, "10 item 26"
  std::size_t line = 0;
};

/// Every section number cited right after `docs/<page>.md`: `§4.2`, `section 4`, a bare `3.1`, and
/// the lists and ranges that follow one (`§5.1-5.2`, `§5.2, §5.4`, `§3.1/§3.2`, `§9.2 and §10 item
/// 27`, `§10 items 20, 21`).
std::vector<Citation> citations_in(const std::string& text) {
  std::vector<Citation> found;
  for (const std::string page : {"references", "design"}) {
    const std::string name = "docs/" + page + ".md";
    std::size_t at = 0;
    while ((at = text.find(name, at)) != std::string::npos) {
      const std::size_t line =
          1 + static_cast<std::size_t>(std::count(text.begin(), text.begin() + at, '\n'));
      std::size_t p = skip_blanks(text, at + name.size());
      at += name.size();
      bool first = true;
      while (p < text.size()) {
        std::size_t q = after(text, p, section_sign);
        if (q == std::string::npos) q = after(text, p, "section ");
        if (q == std::string::npos && first) q = p;  // the bare form "docs/references.md 3.1"
        if (q == std::string::npos) break;
        const std::string number = number_at(text, q);
        if (number.empty()) break;
        found.push_back({page, number, line});
        p = q + number.size();
        // "§10 item 26", "§10 items 20, 21"
        std::size_t r = skip_blanks(text, p);
        std::size_t s = after(text, r, "items ");
        if (s == std::string::npos) s = after(text, r, "item ");
        while (s != std::string::npos) {
          const std::string item = number_at(text, s);
          if (item.empty()) break;
          found.push_back({page, number + " item " + item, line});
          p = s + item.size();
          s = after(text, p, ", ");
          if (s != std::string::npos && number_at(text, s).empty()) s = std::string::npos;
        }
        // A range "§5.1-5.2" / "§5.1–5.2": the second number without its own sign.
        for (const std::string_view dash : {"-", "\xE2\x80\x93"}) {
          const std::size_t d = after(text, p, dash);
          if (d != std::string::npos && !number_at(text, d).empty()) {
            const std::string end = number_at(text, d);
            found.push_back({page, end, line});
            p = d + end.size();
          }
        }
        // A list goes on only with another sign: ", §", " and §", "/§", " / §".
        std::size_t next = std::string::npos;
        for (const std::string_view joint : {", ", " and ", "/", " / "}) {
          const std::size_t j = after(text, p, joint);
          if (j != std::string::npos && after(text, j, section_sign) != std::string::npos) next = j;
        }
        if (next == std::string::npos) break;
        p = next;
        first = false;
      }
    }
  }
  return found;
}

/// "file:line: docs/<page>.md §N: ..." for every citation that names no heading (or no §10 item).
std::vector<std::string> unresolved(const std::string& file, const std::string& text,
                                    const Page& references, const Page& design) {
  std::vector<std::string> problems;
  for (const Citation& c : citations_in(text)) {
    const Page& page = c.page == "references" ? references : design;
    bool ok = false;
    if (const std::size_t item = c.section.find(" item "); item != std::string::npos) {
      ok = c.section.substr(0, item) == "10" &&
           page.check_items.count(std::stoi(c.section.substr(item + 6))) > 0;
    } else {
      ok = std::find(page.headings.begin(), page.headings.end(), c.section) != page.headings.end();
    }
    if (!ok) {
      problems.push_back(file + ":" + std::to_string(c.line) + ": docs/" + c.page + ".md " +
                         section_sign + c.section + " is not a section of that page");
    }
  }
  return problems;
}

/// "file:line: ..." for every mention of the working notes' own file names. The names are put
/// together here so that this file does not cite them itself.
std::vector<std::string> outside_citations(const std::string& file, const std::string& text) {
  std::vector<std::string> problems;
  for (const std::string& name :
       {std::string("REFERENCES") + ".md", std::string("DESIGN") + ".md"}) {
    std::size_t at = 0;
    while ((at = text.find(name, at)) != std::string::npos) {
      const std::size_t line =
          1 + static_cast<std::size_t>(std::count(text.begin(), text.begin() + at, '\n'));
      problems.push_back(file + ":" + std::to_string(line) + ": cites " + name +
                         ", a page outside the repository: cite docs/" +
                         (name[0] == 'R' ? "references" : "design") + ".md instead");
      at += name.size();
    }
  }
  return problems;
}

const fs::path root = SPURCAST_SOURCE_DIR;

/// The files whose citations are checked, relative to the source folder, sorted.
std::vector<fs::path> cited_from() {
  std::vector<fs::path> files{"README.md", "DEVELOPERS.md"};
  for (const char* folder : {"core", "cli", "tests", "limits", "examples"}) {
    if (!fs::is_directory(root / folder)) continue;
    for (auto it = fs::recursive_directory_iterator(root / folder);
         it != fs::recursive_directory_iterator(); ++it) {
      const fs::path relative = fs::relative(it->path(), root);
      if (it->is_directory() && relative == fs::path("tests/fuzz/corpus")) {
        it.disable_recursion_pending();  // mutated fuzzer inputs, not text of the project
        continue;
      }
      if (it->is_regular_file()) files.push_back(relative);
    }
  }
  std::sort(files.begin(), files.end());
  return files;
}

std::string joined(const std::vector<std::string>& lines) {
  std::string text;
  for (const std::string& line : lines) text += line + "\n";
  return text;
}

}  // namespace

TEST_CASE("the checker finds headings, items and every form of citation") {
  const Page page = parse_page(
      "# Title\n\n## 1. Receiver\n\n### 1.1 Bands\n\n### 1.4a Diode\n\n```\n## 7. not a "
      "heading\n```\n"
      "## 10. Check values\n\n1. first\n26. twenty-sixth\n\n## Sources\n\n3. not an item\n");
  CHECK(page.headings == std::vector<std::string>{"1", "1.1", "1.4a", "10"});
  CHECK(page.check_items == std::set<int>{1, 26});

  const std::string text =
      "// fine: docs/references.md §1.1, §1.4a and §10 item 26.\n"
      "// bad: docs/references.md §1.2 and docs/references.md §10 items 1, 2\n"
      "// range: docs/references.md §1.1-1.3; bare: docs/references.md 7; words: docs/design.md "
      "section 4.\n"
      "// page only: docs/references.md marks [F]; text after: docs/references.md §1.1: 5 ms\n";
  const std::vector<std::string> problems = unresolved("x.cpp", text, page, page);
  const std::set<std::string> as_set(problems.begin(), problems.end());
  CHECK(as_set == std::set<std::string>{
                      "x.cpp:2: docs/references.md \xC2\xA7"
                      "1.2 is not a section of that page",
                      "x.cpp:2: docs/references.md \xC2\xA7"
                      "10 item 2 is not a section of that page",
                      "x.cpp:3: docs/references.md \xC2\xA7"
                      "1.3 is not a section of that page",
                      "x.cpp:3: docs/references.md \xC2\xA7"
                      "7 is not a section of that page",
                      "x.cpp:3: docs/design.md \xC2\xA7"
                      "4 is not a section of that page",
                  });

  const std::string old_name =
      std::string("see ../shared/REFERENCES") + ".md " + section_sign + "1.1";
  CHECK(outside_citations("y.hpp", "\n" + old_name).size() == 1);
  CHECK(outside_citations("y.hpp", "docs/references.md and DEVELOPERS.md").empty());
}

TEST_CASE("the project's pages number their sections once each, in order") {
  for (const char* name : {"docs/references.md", "docs/design.md"}) {
    CAPTURE(name);
    const Page page = parse_page(read_text(root / name));
    REQUIRE(page.headings.size() >= 10);
    const std::set<std::string> unique(page.headings.begin(), page.headings.end());
    CHECK(unique.size() == page.headings.size());
    // Chapters 1, 2, ... in order; each subsection inside its chapter.
    int chapter = 0;
    for (const std::string& heading : page.headings) {
      CAPTURE(heading);
      const int major = std::stoi(heading);
      CHECK(major >= chapter);
      if (heading.find('.') == std::string::npos &&
          !std::isalpha(static_cast<unsigned char>(heading.back()))) {
        CHECK(major > chapter);
      }
      chapter = major;
    }
  }
  const Page design = parse_page(read_text(root / "docs/design.md"));
  CHECK(design.headings ==
        std::vector<std::string>{"1", "2", "3", "4", "5", "6", "7", "8", "9", "10"});
  const Page references = parse_page(read_text(root / "docs/references.md"));
  CHECK(references.check_items.size() >= 25);
}

TEST_CASE("every citation of docs/references.md and docs/design.md names a section that exists") {
  const Page references = parse_page(read_text(root / "docs/references.md"));
  const Page design = parse_page(read_text(root / "docs/design.md"));
  std::vector<std::string> problems;
  std::size_t cited = 0;
  for (const fs::path& file : cited_from()) {
    const std::string text = read_text(root / file);
    cited += citations_in(text).size();
    for (std::string& problem : unresolved(file.string(), text, references, design))
      problems.push_back(problem);
    for (std::string& problem : outside_citations(file.string(), text)) problems.push_back(problem);
  }
  CHECK(cited > 100);  // the walk reached the sources
  CHECK_MESSAGE(problems.empty(), joined(problems));
}
