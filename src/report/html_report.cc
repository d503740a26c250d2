// HtmlReport: one self-contained HTML page of sections, tables, figures and notes.
#include "credence/html_report.h"

#include <fmt/format.h>

#include "credence/plot.h"
#include "report/html_style.h"

namespace credence {
namespace {

// Paragraphs split at blank lines; single newlines become line breaks.
std::string paragraphs_html(std::string_view text, std::string_view css_class = {}) {
  std::string out;
  std::size_t start = 0;
  while (start <= text.size()) {
    std::size_t end = text.find("\n\n", start);
    std::string_view part = text.substr(start, end == std::string_view::npos ? end : end - start);
    if (!part.empty()) {
      std::string escaped = escape_markup(part);
      std::string html;
      for (char c : escaped) html += c == '\n' ? std::string("<br>") : std::string(1, c);
      out += css_class.empty() ? fmt::format("<p>{}</p>\n", html)
                               : fmt::format("<p class=\"{}\">{}</p>\n", css_class, html);
    }
    if (end == std::string_view::npos) break;
    start = end + 2;
  }
  return out;
}

std::string slug(std::string_view heading) {
  std::string out;
  for (char c : heading) {
    bool word = (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9');
    if (c >= 'A' && c <= 'Z') {
      c = static_cast<char>(c - 'A' + 'a');
      word = true;
    }
    if (word) out += c;
    else if (!out.empty() && out.back() != '-') out += '-';
  }
  while (!out.empty() && out.back() == '-') out.pop_back();
  return out.empty() ? "section" : out;
}

}  // namespace

std::string_view cautions_text() {
  return "Calibration was measured on the held-out rows only. It holds for new cases like "
         "those rows; it says nothing about cases unlike the training data, or about a "
         "population that has shifted since the data were collected.\n\n"
         "Decisions about people's health, credit or safety need validation under local "
         "regulation and licensed professional practice; do not rest them on these "
         "probabilities alone.";
}

HtmlReport::HtmlReport(std::string title) : title_(std::move(title)) {
  sections_.push_back(Section{});
}

void HtmlReport::subtitle(std::string text) { subtitle_ = std::move(text); }
void HtmlReport::footer(std::string text) { footer_ = std::move(text); }

void HtmlReport::section(std::string heading) {
  std::string base = "s-" + slug(heading);
  std::string anchor = base;
  // Anchors stay unique when two sections share a title.
  for (int k = 2;; ++k) {
    bool taken = false;
    for (const Section& s : sections_) taken = taken || s.anchor == anchor;
    if (!taken) break;
    anchor = fmt::format("{}-{}", base, k);
  }
  sections_.push_back(Section{std::move(heading), std::move(anchor), {}});
}

void HtmlReport::add(Block::Kind kind, std::string html) {
  sections_.back().blocks.push_back(Block{kind, std::move(html)});
}

void HtmlReport::paragraph(std::string text) {
  add(Block::Kind::kParagraph, paragraphs_html(text));
}

void HtmlReport::key_values(std::vector<std::pair<std::string, std::string>> items) {
  std::string html = "<dl class=\"pairs\">\n";
  for (const auto& [name, value] : items) {
    html += fmt::format("<dt>{}</dt><dd>{}</dd>\n", escape_markup(name), escape_markup(value));
  }
  add(Block::Kind::kRaw, html + "</dl>\n");
}

void HtmlReport::table(const TextTable& table, std::string caption) {
  std::string html = render_html(table);
  if (!caption.empty()) html += paragraphs_html(caption, "caption");
  add(Block::Kind::kRaw, std::move(html));
}

void HtmlReport::figure(std::string svg, std::string caption) {
  // HTML puts an inline <svg> in the SVG namespace itself; dropping the attribute keeps
  // the page free of any URL-like text.
  constexpr std::string_view kNamespace = " xmlns=\"http://www.w3.org/2000/svg\"";
  std::size_t tag_end = svg.find('>');
  std::size_t at = svg.find(kNamespace);
  if (at != std::string::npos && at < tag_end) svg.erase(at, kNamespace.size());
  std::string html = "<figure>\n" + svg;
  // The caption wraps at the chart's width: a wider caption would widen the figure, and
  // two charts that fit side by side would then stack.
  std::string width_style;
  if (const std::size_t found = svg.find(" width=\""); found < svg.find('>')) {
    const std::size_t start = found + 8;
    const std::string width = svg.substr(start, svg.find('"', start) - start);
    if (!width.empty() && width.find_first_not_of("0123456789") == std::string::npos) {
      width_style = fmt::format(" style=\"max-width: {}px\"", width);
    }
  }
  if (!caption.empty()) {
    html += fmt::format("<figcaption{}>{}</figcaption>\n", width_style, escape_markup(caption));
  }
  add(Block::Kind::kFigure, html + "</figure>\n");
}

void HtmlReport::note(std::string text, NoteKind kind) {
  bool warning = kind == NoteKind::kWarning;
  std::string body = escape_markup(text);
  add(warning ? Block::Kind::kWarning : Block::Kind::kNote,
      fmt::format("<div class=\"{}\"><strong>{}</strong>{}</div>\n", warning ? "warning" : "note",
                  warning ? "Warning." : "Note.", body));
}

void HtmlReport::cautions() {
  section("Cautions");
  add(Block::Kind::kParagraph, paragraphs_html(cautions_text()));
}

std::string HtmlReport::render() const {
  std::string out = fmt::format(
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
      // The page may load nothing: no scripts, fonts, images or style sheets from anywhere.
      "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
      "style-src 'unsafe-inline'\">\n"
      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
      "<meta name=\"generator\" content=\"credence\">\n"
      "<title>{}</title>\n<style>{}</style>\n</head>\n<body>\n",
      escape_markup(title_), report::page_style());
  out += fmt::format("<header class=\"masthead\">\n<h1>{}</h1>\n", escape_markup(title_));
  if (!subtitle_.empty()) out += fmt::format("<p>{}</p>\n", escape_markup(subtitle_));
  out += "</header>\n";

  if (sections_.size() > 1) {
    out += "<nav class=\"contents\" aria-label=\"Contents\">\n<h2>Contents</h2>\n<ol>\n";
    for (std::size_t i = 1; i < sections_.size(); ++i) {
      out += fmt::format("<li><a href=\"#{}\"><span class=\"number\">{}</span>{}</a></li>\n",
                         sections_[i].anchor, i, escape_markup(sections_[i].heading));
    }
    out += "</ol>\n</nav>\n";
  }

  out += "<main>\n";
  for (std::size_t i = 0; i < sections_.size(); ++i) {
    const Section& section = sections_[i];
    if (i == 0 && section.blocks.empty()) continue;
    if (i == 0) {
      out += "<section class=\"preamble\">\n";
    } else {
      out += fmt::format("<section id=\"{}\"{}>\n<h2><span class=\"number\">{}</span>{}</h2>\n",
                         section.anchor,
                         section.anchor == "s-cautions" ? " class=\"cautions\"" : "", i,
                         escape_markup(section.heading));
    }
    bool in_figures = false;
    for (const Block& block : section.blocks) {
      bool is_figure = block.kind == Block::Kind::kFigure;
      if (is_figure && !in_figures) out += "<div class=\"figures\">\n";
      if (!is_figure && in_figures) out += "</div>\n";
      in_figures = is_figure;
      out += block.html;
    }
    if (in_figures) out += "</div>\n";
    out += "</section>\n";
  }
  out += "</main>\n";
  out += fmt::format("<footer>{}</footer>\n",
                     escape_markup(footer_.empty() ? "Written by credence." : footer_));
  out += "</body>\n</html>\n";
  return out;
}

}  // namespace credence
