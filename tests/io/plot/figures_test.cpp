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

TEST_CASE("tick_label: a tick at negative zero reads 0", "[plot]") {
  // An empty figure's axis ran from -0.05 to 1.05 and labelled its first tick "-0".
  CHECK(detail::tick_label(-0.0, 1.0) == "0");
  CHECK(detail::tick_label(-0.0, 0.1) == "0.0");
  CHECK(detail::tick_label(-1.0, 1.0) == "-1");
}

TEST_CASE("log_ticks: powers of ten, 2 and 5 between on short axes, labels as values", "[plot]") {
  // Decade ticks with 2 and 5 between them on a short log axis: common practice, no source.
  // Positions are log10 of the values, so 10^t must come back as the labelled value.
  auto values = [](detail::Range r) {
    std::vector<double> v;
    for (double t : detail::log_ticks(r)) v.push_back(std::pow(10.0, t));
    return v;
  };
  const auto four_decades = values({4, 7});  // 10,000 to 10,000,000
  REQUIRE(four_decades.size() == 4);
  for (std::size_t i = 0; i < 4; ++i)
    CHECK(four_decades[i] == Approx(std::pow(10.0, 4 + double(i))).epsilon(1e-12));
  using Labels = std::vector<std::string>;
  const auto labels = [](std::vector<double> ticks) { return detail::log_tick_labels(ticks); };
  CHECK(labels({2, 3, 4}) == Labels{"100", "1,000", "10,000"});
  CHECK(labels({std::log10(0.002), std::log10(0.005)}) == Labels{"0.002", "0.005"});
  // One axis never mixes the forms: from a tick that reads well only as a power of ten
  // (10^6 and up, under 10^-3) on, all of them are powers of ten.
  CHECK(labels({4, 5, 6, 7}) == Labels{"1e4", "1e5", "1e6", "1e7"});
  CHECK(labels({std::log10(2e-5), -4, -3}) == Labels{"2e-5", "1e-4", "1e-3"});
  // Landmark counts 32 to 2,048: under two decades, so 50, 100, 200, 500, 1,000, 2,000.
  const auto landmarks = values({std::log10(32.0), std::log10(2048.0)});
  const std::vector<double> expected{50, 100, 200, 500, 1000, 2000};
  REQUIRE(landmarks.size() == expected.size());
  for (std::size_t i = 0; i < expected.size(); ++i)
    CHECK(landmarks[i] == Approx(expected[i]).epsilon(1e-12));
  // A tenth of a decade has no 1-2-5 tick inside: nice steps of the values, at least three,
  // inside the range, with distinct labels.
  const detail::Range short_axis{std::log10(0.95), std::log10(1.2)};
  const auto ticks = detail::log_ticks(short_axis);
  REQUIRE(ticks.size() >= 3);
  for (std::size_t i = 0; i < ticks.size(); ++i) {
    CHECK(ticks[i] >= short_axis.lo - 1e-12);
    CHECK(ticks[i] <= short_axis.hi + 1e-12);
    if (i) CHECK(detail::log_tick_labels(ticks)[i] != detail::log_tick_labels(ticks)[i - 1]);
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
