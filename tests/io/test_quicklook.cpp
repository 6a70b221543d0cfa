// Quick-look PNGs: the file is a valid PNG of the requested size with real
// content, decoded independently by a small stdlib-only (zlib) PNG reader in
// /usr/bin/python3 (PNG specification, W3C/ISO 15948: chunk CRCs, filters 0-4).
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/quicklook.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;

namespace {

core::ImageD beta_image(int n) {
  core::ImageD im(n, n);
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) {
      const double dx = ix - 0.5 * (n - 1) - 10.0, dy = iy - 0.5 * (n - 1);
      im(ix, iy) = std::pow(1.0 + (dx * dx + 0.6 * dy * dy) / 100.0, -1.5);
    }
  im(3, 3) = std::nan("");  // a masked pixel must not break the picture
  im.set_anchor({150.0, 2.0, 0.5 * (n + 1), 0.5 * (n + 1), 2.0});
  return im;
}

const char* kDecode = R"PY(
import sys, zlib, struct
data = open(sys.argv[1], 'rb').read()
assert data[:8] == b'\x89PNG\r\n\x1a\n', 'magic'
pos, idat, crc_ok = 8, b'', 1
while pos < len(data):
    n, typ = struct.unpack('>I4s', data[pos:pos + 8])
    body = data[pos + 8:pos + 8 + n]
    crc, = struct.unpack('>I', data[pos + 8 + n:pos + 12 + n])
    crc_ok &= int(zlib.crc32(typ + body) & 0xffffffff == crc)
    if typ == b'IHDR':
        w, h, depth, ctype = struct.unpack('>IIBB', body[:10])
    elif typ == b'IDAT':
        idat += body
    pos += 12 + n
    if typ == b'IEND':
        break
bpp = {2: 3, 6: 4}[ctype] * depth // 8
raw = zlib.decompress(idat)
stride = w * bpp
prev = bytearray(stride)
colours = set()
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
    if y % 4 == 0:
        for x in range(0, w, 2):
            colours.add(bytes(line[x * bpp:x * bpp + 3]))
    prev = line
print('size', w, h)
print('crc_ok', crc_ok)
print('colours', len(colours))
)PY";

}  // namespace

TEST_CASE("quick-look PNG is a valid picture with content", "[io][quicklook][python]") {
  const auto dir = testing::scratch_dir("quicklook");
  const auto img = beta_image(128);
  struct Opt {
    const char* name;
    io::Stretch stretch;
    double kpc_per_arcsec;
  };
  for (const Opt& o : {Opt{"asinh.png", io::Stretch::Asinh, 1.84}, Opt{"log.png", io::Stretch::Log, 0.0},
                       Opt{"linear.png", io::Stretch::Linear, 3.3}}) {
    INFO(o.name);
    io::QuicklookOptions opt;
    opt.stretch = o.stretch;
    opt.title = "Fictional A, 0.5-2 keV";
    opt.colorbar_label = "count/s/pixel";
    opt.kpc_per_arcsec = o.kpc_per_arcsec;
    opt.width_px = 640;
    opt.height_px = 520;
    const auto path = (dir / o.name).string();
    io::write_quicklook_png(path, img, opt);
    REQUIRE(fs::exists(path));
    std::ifstream f(path, std::ios::binary);
    char magic[8];
    f.read(magic, 8);
    CHECK(std::string(magic, 8) == std::string("\x89PNG\r\n\x1a\n", 8));  // PNG signature
    const auto r = testing::run_python(dir, "decode", kDecode, path);
    INFO(r.out);
    REQUIRE(r.status == 0);
    std::istringstream in(r.out);
    std::string key;
    int w = 0, h = 0, crc = 0, colours = 0;
    while (in >> key) {
      if (key == "size") in >> w >> h;
      if (key == "crc_ok") in >> crc;
      if (key == "colours") in >> colours;
    }
    CHECK(w == 640);
    CHECK(h == 520);
    CHECK(crc == 1);
    CHECK(colours > 50);  // a colour-mapped image, not a blank page
  }
  for (const auto& e : fs::directory_iterator(dir)) CHECK(e.path().filename().string().find(".tmp-") == std::string::npos);
}

TEST_CASE("quick-look argument errors", "[io][quicklook]") {
  const auto dir = testing::scratch_dir("quicklook_errors");
  CHECK_THROWS_AS(io::write_quicklook_png((dir / "x.png").string(), core::ImageD()), core::DomainError);
  CHECK_THROWS_AS(io::write_quicklook_png((dir / "nodir" / "x.png").string(), beta_image(16)), core::OutputError);
  io::QuicklookOptions o;
  o.stretch = io::Stretch::Log;
  o.vmin = -1.0;
  CHECK_THROWS_AS(io::write_quicklook_png((dir / "x.png").string(), beta_image(16), o), core::DomainError);
  // A flat or all-NaN map still gives a picture.
  io::write_quicklook_png((dir / "flat.png").string(), core::ImageD(20, 10, 1.0));
  io::write_quicklook_png((dir / "nan.png").string(), core::ImageD(20, 10, std::nan("")));
  CHECK(fs::exists(dir / "flat.png"));
  CHECK(fs::exists(dir / "nan.png"));
}
