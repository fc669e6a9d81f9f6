// The run's report page: one self-contained HTML file (no scripts, no network; the PNG
// figures are embedded as data: URIs) with tables of figures, the plots and the warnings.
#pragma once

#include <cstddef>
#include <string>
#include <utility>
#include <vector>

namespace unfurl::io::plot {

struct ReportTable {
  std::string heading;
  std::vector<std::pair<std::string, std::string>> rows;  // name, value
};
struct ReportFigure {
  std::string caption;
  std::string png;  // the PNG file's bytes
  int width = 0, height = 0;
};
struct ReportPage {
  std::string title;
  std::string created;  // UTC ISO 8601
  std::vector<std::string> warnings;
  std::vector<ReportTable> tables;
  std::vector<ReportFigure> figures;
  std::size_t tables_before_figures = 1;  // the key figures first, the long tables after
};

std::string report_html(const ReportPage& page);

// Text made safe inside HTML elements and attribute values.
std::string html_escape(const std::string& text);
// RFC 4648 base64 with padding.
std::string base64(const std::string& bytes);

}  // namespace unfurl::io::plot
