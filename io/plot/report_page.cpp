#include "io/plot/report_page.hpp"

#include <fmt/core.h>

#include <algorithm>

namespace unfurl::io::plot {

std::string html_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string base64(const std::string& bytes) {
  static constexpr char alphabet[] =
      "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  out.reserve((bytes.size() + 2) / 3 * 4);
  for (std::size_t i = 0; i < bytes.size(); i += 3) {
    const std::size_t n = std::min<std::size_t>(3, bytes.size() - i);
    std::uint32_t v = 0;
    for (std::size_t j = 0; j < 3; ++j)
      v = v << 8 | (j < n ? static_cast<unsigned char>(bytes[i + j]) : 0u);
    for (std::size_t j = 0; j < 4; ++j) out += j <= n ? alphabet[(v >> (18 - 6 * j)) & 63] : '=';
  }
  return out;
}

std::string report_html(const ReportPage& page) {
  std::string h;
  h += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  h += "<title>" + html_escape(page.title) + "</title>\n";
  h += R"(<style>
body { font-family: "DejaVu Sans", sans-serif; margin: 2em auto; max-width: 960px; color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.15em; margin-top: 1.6em; }
table { border-collapse: collapse; margin: 0.5em 0; }
td { padding: 0.2em 1em 0.2em 0; vertical-align: top; border-bottom: 1px solid #e4e4e4;
     overflow-wrap: anywhere; }
td:first-child { color: #555; white-space: nowrap; }
.warnings li { color: #8a3a00; }
figure { margin: 1.2em 0; } img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { color: #555; font-size: 0.9em; }
</style>
</head>
<body>
)";
  h += "<h1>" + html_escape(page.title) + "</h1>\n";
  if (!page.created.empty()) h += "<p>Made " + html_escape(page.created) + " by unfurl.</p>\n";
  h += "<h2>Warnings</h2>\n";
  if (page.warnings.empty()) {
    h += "<p>None.</p>\n";
  } else {
    h += "<ul class=\"warnings\">\n";
    for (const auto& w : page.warnings) h += "<li>" + html_escape(w) + "</li>\n";
    h += "</ul>\n";
  }
  auto table = [&h](const ReportTable& t) {
    h += "<h2>" + html_escape(t.heading) + "</h2>\n<table>\n";
    for (const auto& [name, value] : t.rows)
      h += "<tr><td>" + html_escape(name) + "</td><td>" + html_escape(value) + "</td></tr>\n";
    h += "</table>\n";
  };
  const std::size_t first = std::min(page.tables_before_figures, page.tables.size());
  for (std::size_t i = 0; i < first; ++i) table(page.tables[i]);
  if (!page.figures.empty()) h += "<h2>Figures</h2>\n";
  for (const ReportFigure& f : page.figures)
    h += fmt::format(
        "<figure><img src=\"data:image/png;base64,{}\" width=\"{}\" height=\"{}\" alt=\"{}\">"
        "<figcaption>{}</figcaption></figure>\n",
        base64(f.png), f.width, f.height, html_escape(f.caption), html_escape(f.caption));
  for (std::size_t i = first; i < page.tables.size(); ++i) table(page.tables[i]);
  h += "</body>\n</html>\n";
  return h;
}

}  // namespace unfurl::io::plot
