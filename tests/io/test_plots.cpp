// Summary plots (io/plots.hpp): a valid PNG of the requested size (PNG
// specification, W3C/ISO 15948: signature, then the IHDR chunk with width and
// height), atomic output, one-line errors for bad arguments.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/plots.hpp"
#include "test_support.hpp"

namespace fs = std::filesystem;
using namespace icmscope;

namespace {

std::vector<unsigned char> bytes(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

unsigned be32(const std::vector<unsigned char>& b, std::size_t k) {
  return (unsigned(b[k]) << 24) | (unsigned(b[k + 1]) << 16) | (unsigned(b[k + 2]) << 8) | unsigned(b[k + 3]);
}

}  // namespace

TEST_CASE("plots: scatter, histogram and categorical panels give a PNG of the requested size", "[io][plots]") {
  const auto dir = icmscope::testing::scratch_dir("plots");
  io::PlotPanel scatter;
  scatter.title = "c vs w";
  scatter.log_x = scatter.log_y = true;
  io::PlotSeries s;
  s.label = "points";
  s.x = {1e-3, 5e-3, 0.02, -0.01};  // the last one sits on the floor of the log axis
  s.y = {0.3, 0.2, 0.1, 0.15};
  s.x_lo = {5e-4, 4e-3, 0.01, NAN};
  s.x_hi = {2e-3, 6e-3, 0.03, NAN};
  scatter.series.push_back(s);
  scatter.lines.push_back({true, 0.012, "w = 0.012", {90, 90, 90}});
  scatter.legend_outside = true;
  io::PlotPanel hist;
  hist.histograms.push_back({"a", {0.1, 0.12, 0.2, 0.25, 0.3}, {40, 90, 200}});
  io::PlotPanel cats;
  cats.x_categories = {"x", "y", "z"};
  io::PlotSeries c;
  c.x = {0, 1, 2};
  c.y = {1e-8, 3e-8, 2e-7};
  cats.log_y = true;
  cats.series.push_back(c);
  const auto path = dir / "p.png";
  io::write_plot_png(path.string(), {scatter, hist, cats}, 3, 1200, 400);
  const auto b = bytes(path);
  REQUIRE(b.size() > 33);
  const unsigned char sig[8] = {0x89, 'P', 'N', 'G', 0x0D, 0x0A, 0x1A, 0x0A};
  for (int k = 0; k < 8; ++k) CHECK(b[static_cast<std::size_t>(k)] == sig[k]);
  CHECK(std::string(b.begin() + 12, b.begin() + 16) == "IHDR");
  CHECK(be32(b, 16) == 1200u);
  CHECK(be32(b, 20) == 400u);
  // No temporary file is left beside it.
  for (const auto& e : fs::directory_iterator(dir)) CHECK(e.path().filename() == "p.png");
}

TEST_CASE("plots: bad arguments are errors naming the file", "[io][plots]") {
  const auto dir = icmscope::testing::scratch_dir("plots_errors");
  const std::string p = (dir / "bad.png").string();
  CHECK_THROWS_AS(io::write_plot_png(p, {}), core::DomainError);
  io::PlotPanel panel;
  io::PlotSeries s;
  s.x = {1, 2};
  s.y = {1};
  panel.series.push_back(s);
  try {
    io::write_plot_png(p, {panel});
    FAIL("expected a DomainError");
  } catch (const core::DomainError& e) {
    CHECK(std::string(e.what()).find("bad.png") != std::string::npos);
  }
  CHECK_THROWS_AS(io::write_plot_png((dir / "no_such_dir" / "x.png").string(), {io::PlotPanel{}}), core::OutputError);
  CHECK(!fs::exists(p));
}
