// The report page in a real browser: Debian's chromium opens index.html of the demo chain
// headless (no network: every fetching feature off, a fresh profile). --dump-dom must hold the
// budget table and every plot the report wrote; --screenshot must give a PNG that is not blank.
// Chromium is a test dependency that CI installs (.ci/install-deps); where the environment
// variable CI is set, a missing chromium fails the test instead of skipping it.
#include <doctest/doctest.h>

#include <png.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "cli_support.hpp"

using namespace peakplan::test;

namespace {

namespace fs = std::filesystem;

// The window the screenshot is taken in: a laptop screen's width, tall enough for the tables.
constexpr int kWidth = 1280, kHeight = 1800;

// The flags the brief for this check fixes: headless, and nothing that would reach a network.
std::string chromium_command(const std::string& chromium, const fs::path& profile) {
  return shell_quoted(chromium) +
         " --headless --no-sandbox --disable-gpu --disable-quic --no-first-run --disable-background-networking"
         " --disable-component-update --disable-sync --user-data-dir=" +
         shell_quoted(profile.string());
}

// chromium's path, or empty when it is missing: then the check fails under CI and is skipped
// (with a message) elsewhere.
std::string chromium_or_skip() {
  const std::string chromium = find_on_path("chromium");
  if (chromium.empty()) {
    if (std::getenv("CI")) FAIL("chromium is not installed; .ci/install-deps installs it");
    MESSAGE("chromium is not installed: the browser check did not run (it fails instead where CI is set)");
  }
  return chromium;
}

// The page at `url` as chromium renders it (its DOM after scripts and layout).
std::string rendered_dom(const std::string& chromium, const fs::path& work, const std::string& url) {
  const fs::path dom = work / "dom.html", log = work / "chromium.log";
  const int dumped = run_shell("timeout 120 " + chromium_command(chromium, work / "profile-dom") + " --dump-dom " +
                               shell_quoted(url) + " >" + shell_quoted(dom.string()) + " 2>" +
                               shell_quoted(log.string()));
  REQUIRE_MESSAGE(dumped == 0, "chromium --dump-dom failed:\n" << read_file(log));
  return read_file(dom);
}

struct Pixels {
  int width = 0, height = 0;
  std::vector<unsigned char> rgb;
};

// libpng's simplified API decodes any PNG chromium writes into 8-bit RGB.
Pixels decode_png(const fs::path& path) {
  png_image image{};
  image.version = PNG_IMAGE_VERSION;
  REQUIRE_MESSAGE(png_image_begin_read_from_file(&image, path.c_str()) != 0, "not a PNG: " << image.message);
  image.format = PNG_FORMAT_RGB;
  Pixels p;
  p.width = static_cast<int>(image.width);
  p.height = static_cast<int>(image.height);
  p.rgb.resize(PNG_IMAGE_SIZE(image));
  REQUIRE_MESSAGE(png_image_finish_read(&image, nullptr, p.rgb.data(), 0, nullptr) != 0, image.message);
  return p;
}

}  // namespace

TEST_CASE("browser: chromium renders the demo report with the budget table, every plot, and a non-blank screenshot") {
  const std::string chromium = chromium_or_skip();
  if (chromium.empty()) return;
  TempDir dir("peakplan_browser");
  const fs::path report = dir.path / "report";
  const fs::path demo = fs::path(PEAKPLAN_SOURCE_DIR) / "chains" / "demo_postamp.toml";
  REQUIRE(run_shell(shell_quoted(PEAKPLAN_BINARY) + " report " + shell_quoted(demo.string()) + " --out " +
                    shell_quoted(report.string()) + " >/dev/null") == 0);
  const std::string url = "file://" + (report / "index.html").string();

  const std::string page = rendered_dom(chromium, dir.path, url);
  CHECK(page.find("<table id=\"budget\"") != std::string::npos);
  CHECK(page.find("</html>") != std::string::npos);
  int plots = 0;
  for (const auto& e : fs::directory_iterator(report)) {
    if (e.path().extension() != ".svg") continue;
    ++plots;
    const std::string marker = "data-plot=\"" + e.path().stem().string() + "\"";
    CHECK_MESSAGE(page.find(marker) != std::string::npos, "the rendered page has no " << marker);
  }
  CHECK(plots >= 5);  // magnitude, group delay, step, eye (the demo has a [signal]), pole-zero

  const fs::path shot = dir.path / "shot.png", log = dir.path / "chromium-shot.log";
  const int shot_status = run_shell(
      "timeout 120 " + chromium_command(chromium, dir.path / "profile-shot") + " --hide-scrollbars --window-size=" +
      std::to_string(kWidth) + "," + std::to_string(kHeight) + " --screenshot=" + shell_quoted(shot.string()) + " " +
      shell_quoted(url) + " >" + shell_quoted(log.string()) + " 2>&1");
  REQUIRE_MESSAGE(shot_status == 0, "chromium --screenshot failed:\n" << read_file(log));
  REQUIRE(fs::exists(shot));
  const auto pixels = decode_png(shot);
  CHECK(pixels.width == kWidth);
  CHECK(pixels.height == kHeight);

  // Not blank: the most common colour (the page background) covers well under all of it, the
  // picture has many distinct colours, and its luminance spreads (common practice for telling a
  // rendered page from an empty or single-colour one; a blank page fails all three by far).
  std::map<unsigned, size_t> colours;
  double sum = 0.0, sum2 = 0.0;
  const size_t n = pixels.rgb.size() / 3;
  for (size_t i = 0; i < n; ++i) {
    const unsigned char* px = &pixels.rgb[3 * i];
    ++colours[(unsigned{px[0]} << 16) | (unsigned{px[1]} << 8) | px[2]];
    const double y = 0.2126 * px[0] + 0.7152 * px[1] + 0.0722 * px[2];
    sum += y;
    sum2 += y * y;
  }
  size_t most = 0;
  for (const auto& [colour, count] : colours) most = std::max(most, count);
  const double mean = sum / static_cast<double>(n);
  const double spread = std::sqrt(std::max(0.0, sum2 / static_cast<double>(n) - mean * mean));
  CHECK(static_cast<double>(most) / static_cast<double>(n) < 0.9);
  CHECK(colours.size() > 64);
  CHECK(spread > 10.0);
}

// A report with [variation]: the corner and yield tables, the Monte Carlo histograms and the
// corner envelopes render.
TEST_CASE("browser: chromium renders a [variation] report with its corner and yield tables, every histogram and "
          "both corner envelopes") {
  const std::string chromium = chromium_or_skip();
  if (chromium.empty()) return;
  TempDir dir("peakplan_browser");
  const fs::path report = dir.path / "report";
  const fs::path chain = fs::path(PEAKPLAN_SOURCE_DIR) / "chains" / "variation_post_amp.toml";
  REQUIRE(run_shell(shell_quoted(PEAKPLAN_BINARY) + " report " + shell_quoted(chain.string()) + " --plan --samples 200 --out " +
                    shell_quoted(report.string()) + " >/dev/null") == 0);
  const std::string url = "file://" + (report / "index.html").string();
  const std::string page = rendered_dom(chromium, dir.path, url);
  CHECK(page.find("<table id=\"corners\"") != std::string::npos);
  CHECK(page.find("<table id=\"yield\"") != std::string::npos);
  for (const auto* plot : {"mc_bandwidth", "mc_overshoot", "mc_eye_height", "corners_magnitude", "corners_step"}) {
    CHECK_MESSAGE(fs::exists(report / (std::string(plot) + ".svg")), plot);
    CHECK_MESSAGE(page.find("data-plot=\"" + std::string(plot) + "\"") != std::string::npos, "the rendered page has no " << plot);
  }
  // Each envelope's band (rectangles in the theme's highlight colour) is in the rendered page.
  for (const auto* plot : {"corners_magnitude", "corners_step"}) {
    const auto at = page.find("data-plot=\"" + std::string(plot) + "\"");
    if (at == std::string::npos) continue;
    const auto svg = page.substr(at, page.find("</svg>", at) - at);
    CHECK_MESSAGE(svg.find("fill=\"#e9b73f\"") != std::string::npos, "no band in the rendered " << plot);
  }
}

// A limiting chain's report: the clipped eye and the dynamic-range plots render.
TEST_CASE("browser: chromium renders a limiting chain's report with its clipped eye and dynamic-range plots") {
  const std::string chromium = chromium_or_skip();
  if (chromium.empty()) return;
  TempDir dir("peakplan_browser");
  const fs::path report = dir.path / "report";
  const fs::path chain = fs::path(PEAKPLAN_SOURCE_DIR) / "chains" / "limiting_dynamic_range.toml";
  REQUIRE(run_shell(shell_quoted(PEAKPLAN_BINARY) + " report " + shell_quoted(chain.string()) + " --out " +
                    shell_quoted(report.string()) + " >/dev/null") == 0);
  const std::string url = "file://" + (report / "index.html").string();
  const std::string page = rendered_dom(chromium, dir.path, url);
  for (const auto* plot : {"eye", "eye_clipped", "dynamic_range", "dynamic_range_ddj"})
    CHECK_MESSAGE(page.find("data-plot=\"" + std::string(plot) + "\"") != std::string::npos, "the rendered page has no " << plot);
}
