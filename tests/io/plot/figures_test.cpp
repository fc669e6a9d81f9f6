#include "io/plot/figures.hpp"

#include <catch2/catch.hpp>
#include <cmath>

#include "engine/error.hpp"
#include "io/plot/detail/chart.hpp"

using namespace unfurl;
using namespace unfurl::io::plot;

TEST_CASE("nice_ticks: evenly spaced 1, 2 or 5 steps inside the range, at least three", "[plot]") {
  // Heckbert, "Nice numbers for graph labels" (Graphics Gems, 1990): steps of 1, 2 or 5
  // times a power of ten. Checked as invariants over many ranges.
  for (double lo : {-7.3, 0.0, 0.99975, 1e6, -1e-4})
    for (double width : {1e-5, 0.3, 1.0, 17.0, 2.5e4}) {
      double step = 0;
      const auto ticks = detail::nice_ticks({lo, lo + width}, 5, &step);
      INFO("range " << lo << " + " << width << ", step " << step);
      REQUIRE(ticks.size() >= 3);
      const double mantissa = step / std::pow(10.0, std::floor(std::log10(step)));
      CHECK((std::abs(mantissa - 1) < 1e-9 || std::abs(mantissa - 2) < 1e-9 ||
             std::abs(mantissa - 5) < 1e-9));
      for (std::size_t i = 0; i < ticks.size(); ++i) {
        CHECK(ticks[i] >= lo - 1e-9 * width);
        CHECK(ticks[i] <= lo + width + 1e-9 * width);
        if (!i) continue;
        // Up to the rounding of doubles near the ticks (1e6 + 2e-6 steps).
        const double ulp = std::nextafter(std::abs(ticks[i]), INFINITY) - std::abs(ticks[i]);
        CHECK(std::abs(ticks[i] - ticks[i - 1] - step) < 1e-6 * step + 4 * ulp);
        CHECK(detail::tick_label(ticks[i], step) != detail::tick_label(ticks[i - 1], step));
      }
    }
}

TEST_CASE("image_format_for: by extension, any case; others refused naming the field", "[plot]") {
  CHECK(image_format_for("a/b.png", "-o") == ImageFormat::png);
  CHECK(image_format_for("FIG.SVG", "-o") == ImageFormat::svg);
  try {
    image_format_for("fig.jpg", "-o");
    FAIL("a .jpg figure was accepted");
  } catch (const OptionError& e) {
    CHECK(e.field() == "-o");
    CHECK(std::string(e.what()).find(".jpg") != std::string::npos);
  }
}

TEST_CASE("draw_map refuses axes the map lacks and sizes out of range", "[plot]") {
  PointSet p;
  p.rows = 3;
  p.cols = 2;
  p.values = {0, 0, 1, 0, 0, 1};
  MapFigure f;
  f.coords = &p;
  f.axis_y = 2;
  CHECK_THROWS_AS(draw_map(f, ImageFormat::png), OptionError);
  f.axis_y = 1;
  CHECK_THROWS_AS(draw_map(f, ImageFormat::png, {100, 700}), OptionError);
  const std::string png = draw_map(f, ImageFormat::png, {400, 300});
  CHECK(png.substr(0, 8) == "\x89PNG\r\n\x1a\n");  // PNG signature (PNG specification 5.2)
}
