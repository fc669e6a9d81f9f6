#include "io/plot/report_page.hpp"

#include <catch2/catch.hpp>

using namespace unfurl::io::plot;

TEST_CASE("base64 gives the test vectors of RFC 4648", "[plot]") {
  // RFC 4648, "The Base16, Base32, and Base64 Data Encodings", section 10 (test vectors).
  CHECK(base64("") == "");
  CHECK(base64("f") == "Zg==");
  CHECK(base64("fo") == "Zm8=");
  CHECK(base64("foo") == "Zm9v");
  CHECK(base64("foob") == "Zm9vYg==");
  CHECK(base64("fooba") == "Zm9vYmE=");
  CHECK(base64("foobar") == "Zm9vYmFy");
  // All 256 byte values: the last group of six bits of 0xFF is '/' (RFC 4648 table 1).
  CHECK(base64(std::string(3, '\xFF')) == "////");
}

TEST_CASE("html_escape leaves no markup in text", "[plot]") {
  // The characters HTML gives meaning in text and quoted attributes (common practice, no
  // source beyond the HTML standard's syntax section).
  CHECK(html_escape("a<b>&\"c'") == "a&lt;b&gt;&amp;&quot;c&#39;");
  CHECK(html_escape("plain text 1.5") == "plain text 1.5");
}

TEST_CASE("report_html embeds every figure and escapes every text", "[plot]") {
  ReportPage page;
  page.title = "map <one>";
  page.warnings = {"k & radius"};
  page.tables = {{"Scores", {{"T", "0.99"}}}, {"Input", {{"path", "/x\"y"}}}};
  page.figures = {{"first", "\x89PNG", 10, 20}, {"second", "abc", 30, 40}};
  const std::string html = report_html(page);
  CHECK(html.find("<title>map &lt;one&gt;</title>") != std::string::npos);
  CHECK(html.find("k &amp; radius") != std::string::npos);
  CHECK(html.find("/x&quot;y") != std::string::npos);
  CHECK(html.find("src=\"data:image/png;base64," + base64("\x89PNG") +
                  "\" width=\"10\" "
                  "height=\"20\"") != std::string::npos);
  CHECK(html.find("base64," + base64("abc")) != std::string::npos);
  // The key table, then the figures, then the rest.
  CHECK(html.find("Scores") < html.find("Figures"));
  CHECK(html.find("Figures") < html.find("Input"));
  CHECK(html.find("<script") == std::string::npos);
}
