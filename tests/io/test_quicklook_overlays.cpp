// Quick-look overlays (circles, markers): drawn where asked, in their colours,
// decoded independently by a stdlib-only (zlib) PNG reader in /usr/bin/python3
// (PNG specification, W3C/ISO 15948: filters 0-4). Without overlays the
// picture holds none of the overlay colours (the colour map runs from violet
// through red to pale yellow, never cyan or green).
#include <catch2/catch.hpp>

#include <cmath>
#include <sstream>

#include "icmscope/io/quicklook.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;

namespace {

const char* kCount = R"PY(
import sys, zlib, struct
data = open(sys.argv[1], 'rb').read()
pos, idat = 8, b''
while pos < len(data):
    n, typ = struct.unpack('>I4s', data[pos:pos + 8])
    body = data[pos + 8:pos + 8 + n]
    if typ == b'IHDR': w, h, depth, ctype = struct.unpack('>IIBB', body[:10])
    elif typ == b'IDAT': idat += body
    pos += 12 + n
    if typ == b'IEND': break
bpp = {2: 3, 6: 4}[ctype] * depth // 8
raw = zlib.decompress(idat)
stride = w * bpp
prev = bytearray(stride)
cyan = green = 0
cyan_x = []
for y in range(h):
    f = raw[y * (stride + 1)]
    line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
    for i in range(stride):
        a = line[i - bpp] if i >= bpp else 0
        b = prev[i]
        c = prev[i - bpp] if i >= bpp else 0
        if f == 1: line[i] = (line[i] + a) & 255
        elif f == 2: line[i] = (line[i] + b) & 255
        elif f == 3: line[i] = (line[i] + (a + b) // 2) & 255
        elif f == 4:
            p = a + b - c; pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
            line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
    for x in range(w):
        r, g, bl = line[x * bpp:x * bpp + 3]
        if abs(r - 120) < 40 and abs(g - 230) < 30 and bl > 215: cyan += 1; cyan_x.append(x)
        if r < 140 and g > 215 and abs(bl - 120) < 50: green += 1
    prev = line
print('cyan', cyan, 'green', green, 'xspan', (max(cyan_x) - min(cyan_x)) if cyan_x else 0)
)PY";

struct Counts {
  int cyan = 0, green = 0, xspan = 0;
};

Counts count(const std::filesystem::path& dir, const std::string& png) {
  const auto r = testing::run_python(dir, "count", kCount, png);
  INFO(r.out);
  REQUIRE(r.status == 0);
  std::istringstream in(r.out);
  std::string k;
  Counts c;
  in >> k >> c.cyan >> k >> c.green >> k >> c.xspan;
  return c;
}

}  // namespace

TEST_CASE("quick-look overlays: circles and markers are drawn", "[io][quicklook][python]") {
  const auto dir = testing::scratch_dir("quicklook_overlays");
  const int n = 100;
  core::ImageD img(n, n);
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) img(ix, iy) = std::exp(-0.5 * (std::pow(ix - 50.0, 2) + std::pow(iy - 50.0, 2)) / 100.0);
  img.set_anchor({30.0, -10.0, 50.5, 50.5, 3.0});
  io::QuicklookOptions o;
  o.width_px = 500;
  o.height_px = 420;
  const auto plain = (dir / "plain.png").string();
  io::write_quicklook_png(plain, img, o);
  const Counts c0 = count(dir, plain);
  CHECK(c0.cyan == 0);
  CHECK(c0.green == 0);
  // A circle of radius 40 px about the image centre spans 80/100 of the map's
  // width; a small one of 10 px spans a fifth of that.
  o.circles.push_back({49.5, 49.5, 40.0, "R500"});
  o.markers.push_back({49.5, 49.5, "peak", false, true});
  const auto big = (dir / "big.png").string();
  io::write_quicklook_png(big, img, o);
  const Counts c1 = count(dir, big);
  CHECK(c1.cyan > 200);
  CHECK(c1.green > 5);
  o.circles = {{49.5, 49.5, 10.0, ""}};
  const auto small = (dir / "small.png").string();
  io::write_quicklook_png(small, img, o);
  const Counts c2 = count(dir, small);
  CHECK(c2.cyan > 30);
  CHECK(c2.xspan == Approx(c1.xspan / 4.0).margin(0.1 * c1.xspan));
}
