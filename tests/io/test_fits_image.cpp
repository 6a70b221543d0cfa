// FITS images and WCS, checked against astropy 5.2 (astropy.io.fits with
// checksum verification, astropy.wcs) run from /usr/bin/python3.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/io/wcs.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;
using Catch::Matchers::Contains;
namespace fs = std::filesystem;

namespace {

struct Case {
  std::string name;
  bool is_float;
  int nx, ny;
  core::SkyAnchor anchor;
  std::string unit;
};

std::vector<Case> cases() {
  // RA/Dec spread over the sky, including high declinations, RA wrap and
  // off-centre, fractional reference pixels.
  return {
      {"RATE", false, 64, 48, {150.1, 2.2, 32.5, 24.5, 2.0}, "count/s"},
      {"EXPOSURE", true, 50, 50, {10.0, 85.0, 10.0, 40.25, 0.5}, "cm**2 s"},
      {"POLE", false, 30, 30, {300.0, -89.9, 15.5, 15.5, 8.0}, "count"},
      {"WRAP", false, 40, 20, {359.99, -30.0, 1.0, 20.0, 1.0}, "keV"},
      {"NORTH", true, 33, 17, {45.0, 60.0, 17.0, 9.0, 4.92}, "photon/(cm2 s)"},
  };
}

template <typename T>
core::Image<T> make_image(const Case& c) {
  core::Image<T> im(c.nx, c.ny);
  for (int iy = 0; iy < c.ny; ++iy)
    for (int ix = 0; ix < c.nx; ++ix) im(ix, iy) = static_cast<T>(ix + 100 * iy + 0.25);
  im.set_anchor(c.anchor);
  im.set_unit(c.unit);
  return im;
}

std::vector<io::NamedImage> named_images() {
  std::vector<io::NamedImage> out;
  for (const auto& c : cases()) {
    io::NamedImage ni;
    ni.extname = c.name;
    if (c.is_float) ni.image = make_image<float>(c);
    else ni.image = make_image<double>(c);
    ni.keywords = {io::fits_key("EXPOSURE", 12500.0, "[s]"), io::fits_key("NREAL", 3), io::fits_key("MOCK", true),
                   io::fits_key("LONGNOTE", std::string(100, 'x') + " end", "a long string")};
    ni.history = {"made by a unit test", std::string(150, 'h')};
    out.push_back(std::move(ni));
  }
  return out;
}

std::map<std::string, std::vector<std::string>> parse_lines(const std::string& text) {
  std::map<std::string, std::vector<std::string>> m;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string key, tok;
    if (!(ls >> key)) continue;
    std::vector<std::string> v;
    while (ls >> tok) v.push_back(tok);
    m[key] = v;
  }
  return m;
}

const char* kCheckOwn = R"PY(
import sys, warnings
import numpy as np
from astropy.io import fits
from astropy.wcs import WCS
from astropy.wcs.utils import proj_plane_pixel_scales
from astropy.coordinates import SkyCoord
from astropy import units as u
warnings.simplefilter('error')       # any checksum / header warning fails the script
path, expected = sys.argv[1], sys.argv[2]
with fits.open(path, checksum=True) as hl:
    print('nhdu', len(hl))
    print('primary_naxis', hl[0].header['NAXIS'], int('DATE' in hl[0].header), int('CREATOR' in hl[0].header))
    print('primary_object', hl[0].header['OBJECT'].replace(' ', '_'))
    for hdu in hl:
        print('checksum', hdu.name or 'PRIMARY', hdu.verify_checksum(), hdu.verify_datasum())
    with open(expected) as fe:
        lines = fe.read().splitlines()
    for line in lines:
        name, ra, dec, c1, c2, pix, unit = line.split('|')
        ra, dec, c1, c2, pix = map(float, (ra, dec, c1, c2, pix))
        hdu = hl[name]
        h = hdu.header
        w = WCS(h)
        ref = w.wcs_pix2world([[c1, c2]], 1)[0]
        a = SkyCoord(ra * u.deg, dec * u.deg)
        b = SkyCoord(ref[0] * u.deg, ref[1] * u.deg)
        sep = a.separation(b).arcsec
        scales = proj_plane_pixel_scales(w) * 3600.0
        # step of one pixel at the reference pixel, measured on the sky
        px = w.wcs_pix2world([[c1 + 1, c2]], 1)[0]
        py = w.wcs_pix2world([[c1, c2 + 1]], 1)[0]
        sx = SkyCoord(px[0] * u.deg, px[1] * u.deg)
        sy = SkyCoord(py[0] * u.deg, py[1] * u.deg)
        step_x = b.separation(sx).arcsec
        pa_y = b.position_angle(sy).deg      # north = 0
        pa_x = b.position_angle(sx).deg      # west = 270
        bunit = u.Unit(h['BUNIT'], format='fits')
        ok_unit = int(bunit == u.Unit(unit, format='fits'))
        ny, nx = hdu.data.shape
        yy, xx = np.mgrid[0:ny, 0:nx]
        data_ok = int(np.all(hdu.data == (xx + 100 * yy + 0.25).astype(hdu.data.dtype)))
        print('hdu', name, repr(sep), repr(scales[0] / pix - 1), repr(scales[1] / pix - 1), repr(step_x / pix - 1),
              repr(pa_y), repr(pa_x), ok_unit, data_ok, h['RADESYS'], h['CTYPE1'], h['CTYPE2'], int(h['CDELT1'] < 0),
              int('DATE' in h), int('CREATOR' in h), int(h['EXPOSURE'] == 12500.0), int(len(h['LONGNOTE']) == 104))
        # astropy's sky positions of a few pixels (1-based), for our WCS reader
        for (x, y) in [(1, 1), (nx, 1), (1, ny), (nx, ny), (0.5 * (nx + 1), 0.5 * (ny + 1)), (c1 + 3.3, c2 - 7.1)]:
            wv = w.wcs_pix2world([[x, y]], 1)[0]
            print('sky', name, repr(x), repr(y), repr(float(wv[0])), repr(float(wv[1])))
)PY";

// astropy writes CD-matrix, PC+CDELT and CROTA2 headers with reference pixels away from the centre.
const char* kMakeRotated = R"PY(
import sys, numpy as np
from astropy.io import fits
from astropy.wcs import WCS
path = sys.argv[1]
def hdr(kind, rho_deg, s_arcsec, crpix, crval):
    h = fits.Header()
    h['CTYPE1'], h['CTYPE2'] = 'RA---TAN', 'DEC--TAN'
    h['CUNIT1'], h['CUNIT2'] = 'deg', 'deg'
    h['CRVAL1'], h['CRVAL2'] = crval
    h['CRPIX1'], h['CRPIX2'] = crpix
    h['RADESYS'] = 'FK5'
    h['EQUINOX'] = 2000.0
    r = np.deg2rad(rho_deg)
    c1, c2 = -s_arcsec / 3600.0, s_arcsec / 3600.0
    if kind == 'cd':   # Calabretta & Greisen 2002 eq. 189
        h['CD1_1'], h['CD1_2'] = c1 * np.cos(r), -c2 * np.sin(r)
        h['CD2_1'], h['CD2_2'] = c1 * np.sin(r), c2 * np.cos(r)
    elif kind == 'pc':
        h['CDELT1'], h['CDELT2'] = c1, c2
        # Calabretta & Greisen 2002 eq. 188
        h['PC1_1'], h['PC1_2'] = np.cos(r), -np.sin(r) * c2 / c1
        h['PC2_1'], h['PC2_2'] = np.sin(r) * c1 / c2, np.cos(r)
    else:
        h['CDELT1'], h['CDELT2'] = c1, c2
        h['CROTA2'] = rho_deg
    return h
specs = [('CDIMG', 'cd', 30.0, 2.0, (37.3, 12.8), (210.5, 54.3), (60, 40)),
         ('PCIMG', 'pc', -45.0, 0.492, (-10.0, 200.5), (83.63, -5.39), (100, 80)),
         ('CROTIMG', 'crota', 20.0, 6.0, (1.0, 1.0), (12.0, 80.0), (20, 30))]
hl = [fits.PrimaryHDU()]
for name, kind, rho, s, crpix, crval, (nx, ny) in specs:
    h = hdr(kind, rho, s, crpix, crval)
    hdu = fits.ImageHDU(np.arange(nx * ny, dtype=np.float32).reshape(ny, nx), header=h, name=name)
    hdu.header['BUNIT'] = 'count'
    hl.append(hdu)
fits.HDUList(hl).writeto(path, overwrite=True)
for name, kind, rho, s, crpix, crval, (nx, ny) in specs:
    w = WCS(fits.getheader(path, name))
    print('spec', name, rho, s)
    for (x, y) in [(1, 1), (nx, 1), (1, ny), (nx, ny), (crpix[0], crpix[1]), (17.25, 3.5)]:
        ra, dec = w.wcs_pix2world([[x, y]], 1)[0]
        print('sky', name, repr(float(x)), repr(float(y)), repr(float(ra)), repr(float(dec)))
    for (ra, dec) in [(crval[0] + 0.01, crval[1] - 0.005), (crval[0] - 0.003, crval[1] + 0.002)]:
        x, y = w.wcs_world2pix([[ra, dec]], 1)[0]
        print('pix', name, repr(ra), repr(dec), repr(float(x)), repr(float(y)))
)PY";

double sep_arcsec(double ra1, double dec1, double ra2, double dec2) {
  const double d = core::constants::deg_rad;
  const double a = std::sin(0.5 * (dec2 - dec1) * d), b = std::sin(0.5 * (ra2 - ra1) * d);
  return 2.0 * std::asin(std::sqrt(a * a + std::cos(dec1 * d) * std::cos(dec2 * d) * b * b)) / core::constants::arcsec_rad;
}

}  // namespace

TEST_CASE("FITS images: astropy verifies checksums, WCS and units", "[io][fits_image][python]") {
  const auto dir = testing::scratch_dir("fits_image_astropy");
  const auto path = (dir / "maps.fits").string();
  io::write_fits_images(path, named_images(),
                        {io::fits_key("OBJECT", "Fictional A", "invented cluster"), io::fits_key("TELESCOP", "NONE")},
                        {"primary history"});
  for (const auto& e : fs::directory_iterator(dir)) CHECK(e.path().filename().string().find(".tmp-") == std::string::npos);
  const auto exp = (dir / "expected.txt").string();
  {
    std::ofstream f(exp);
    f.precision(17);
    for (const auto& c : cases())
      f << c.name << "|" << c.anchor.ra_deg << "|" << c.anchor.dec_deg << "|" << c.anchor.crpix1 << "|"
        << c.anchor.crpix2 << "|" << c.anchor.pixel_arcsec << "|" << c.unit << "\n";
  }
  const auto r = testing::run_python(dir, "check_own", kCheckOwn, path + " " + exp);
  INFO(r.out);
  REQUIRE(r.status == 0);
  const auto out = parse_lines(r.out);
  CHECK(out.at("nhdu").at(0) == "6");
  CHECK(out.at("primary_naxis") == std::vector<std::string>{"0", "1", "1"});
  CHECK(out.at("primary_object").at(0) == "Fictional_A");

  std::istringstream in(r.out);
  std::string line;
  int n_hdu = 0, n_checksum = 0, n_sky = 0;
  std::map<std::string, io::FitsImage> back;
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string key;
    ls >> key;
    if (key == "checksum") {
      std::string name;
      int cs, ds;
      ls >> name >> cs >> ds;
      INFO(name);
      CHECK(cs == 1);  // astropy: 1 = checksum present and correct
      CHECK(ds == 1);
      ++n_checksum;
    } else if (key == "hdu") {
      std::string name, radesys, ct1, ct2;
      double sep, sx, sy, step, pa_y, pa_x;
      int unit_ok, data_ok, cdelt_neg, has_date, has_creator, exp_ok, long_ok;
      ls >> name >> sep >> sx >> sy >> step >> pa_y >> pa_x >> unit_ok >> data_ok >> radesys >> ct1 >> ct2 >>
          cdelt_neg >> has_date >> has_creator >> exp_ok >> long_ok;
      INFO(name);
      CHECK(sep < 0.01);  // reference pixel at the anchor within 0.01 arcsec
      CHECK(std::fabs(sx) < 1e-6);  // pixel scale within 1e-6 relative
      CHECK(std::fabs(sy) < 1e-6);
      CHECK(std::fabs(step) < 1e-6);
      // north up (+y = PA 0), +x towards the west (PA 270) (common practice for sky images)
      CHECK(std::fabs(std::remainder(pa_y, 360.0)) < 1e-6);
      CHECK(std::fabs(std::remainder(pa_x - 270.0, 360.0)) < 1e-6);
      CHECK(unit_ok == 1);
      CHECK(data_ok == 1);
      CHECK(radesys == "ICRS");
      CHECK(ct1 == "RA---TAN");
      CHECK(ct2 == "DEC--TAN");
      CHECK(cdelt_neg == 1);
      CHECK(has_date == 1);
      CHECK(has_creator == 1);
      CHECK(exp_ok == 1);
      CHECK(long_ok == 1);
      ++n_hdu;
    } else if (key == "sky") {
      std::string name;
      double x, y, ra, dec;
      ls >> name >> x >> y >> ra >> dec;
      if (!back.count(name)) back.emplace(name, io::read_fits_image(path, name));
      const auto s = back.at(name).wcs.pixel_to_sky(x, y);
      const double d = sep_arcsec(s.ra_deg, s.dec_deg, ra, dec);
      CHECK(d < 1e-6);  // our WCSLIB reading agrees with astropy to a micro-arcsecond
      ++n_sky;
    }
  }
  CHECK(n_checksum == 6);
  CHECK(n_hdu == 5);
  CHECK(n_sky == 30);
}

TEST_CASE("corrupting a byte is caught by the astropy checksum check", "[io][fits_image][python]") {
  const auto dir = testing::scratch_dir("fits_image_corrupt");
  const auto path = (dir / "maps.fits").string();
  io::write_fits_images(path, named_images());
  {
    std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
    f.seekp(-100, std::ios::end);  // inside the last HDU's data
    char c = 0;
    f.read(&c, 1);
    f.seekp(-100, std::ios::end);
    c = static_cast<char>(c ^ 0x5a);
    f.write(&c, 1);
  }
  const std::string code = R"PY(
import sys, warnings
from astropy.io import fits
with warnings.catch_warnings(record=True) as w:
    warnings.simplefilter('always')
    with fits.open(sys.argv[1], checksum=True) as hl:
        [h.data for h in hl]
    print('warnings', sum('datasum' in str(x.message).lower() or 'checksum' in str(x.message).lower() for x in w))
)PY";
  const auto r = testing::run_python(dir, "corrupt", code, path);
  INFO(r.out);
  REQUIRE(r.status == 0);
  const auto out = parse_lines(r.out);
  CHECK(std::stoi(out.at("warnings").at(0)) >= 1);
}

TEST_CASE("reading astropy-written CD / PC / CROTA headers matches astropy", "[io][fits_image][wcs][python]") {
  const auto dir = testing::scratch_dir("fits_image_rotated");
  const auto path = (dir / "rotated.fits").string();
  const auto r = testing::run_python(dir, "make_rotated", kMakeRotated, path);
  INFO(r.out);
  REQUIRE(r.status == 0);
  std::istringstream in(r.out);
  std::string line;
  std::map<std::string, io::FitsImage> imgs;
  int n_sky = 0, n_pix = 0;
  auto get = [&](const std::string& name) -> io::FitsImage& {
    if (!imgs.count(name)) imgs.emplace(name, io::read_fits_image(path, name));
    return imgs.at(name);
  };
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string key, name;
    ls >> key >> name;
    if (key == "spec") {
      double rho, s;
      ls >> rho >> s;
      const auto& im = get(name);
      INFO(name);
      REQUIRE(im.wcs.valid());
      CHECK(im.wcs.rotation_deg() == Approx(rho).margin(1e-9));
      CHECK(im.wcs.pixel_scale_arcsec() == Approx(s).epsilon(1e-12));
      CHECK(im.wcs.pixel_scale_x_arcsec() == Approx(s).epsilon(1e-12));
      CHECK(im.wcs.east_left());
      CHECK(im.image.unit() == "count");
      CHECK(im.image.pixel_arcsec() == Approx(s).epsilon(1e-12));
      CHECK(im.image(3, 2) == Approx(2 * im.image.nx() + 3));  // data[iy][ix] = iy * nx + ix
    } else if (key == "sky") {
      double x, y, ra, dec;
      ls >> x >> y >> ra >> dec;
      const auto& w = get(name).wcs;
      const auto s = w.pixel_to_sky(x, y);
      CHECK(sep_arcsec(s.ra_deg, s.dec_deg, ra, dec) < 1e-6);
      const auto p = w.sky_to_pixel(ra, dec);  // and back
      CHECK(std::hypot(p.x - x, p.y - y) < 1e-7);
      ++n_sky;
    } else if (key == "pix") {
      double ra, dec, x, y;
      ls >> ra >> dec >> x >> y;
      const auto p = get(name).wcs.sky_to_pixel(ra, dec);
      CHECK(std::hypot(p.x - x, p.y - y) < 1e-7);
      ++n_pix;
    }
  }
  CHECK(n_sky == 18);
  CHECK(n_pix == 6);
  CHECK(get("CDIMG").wcs.radesys() == "FK5");
}

TEST_CASE("FITS images read back equal; HDU selection", "[io][fits_image]") {
  const auto dir = testing::scratch_dir("fits_image_readback");
  const auto path = (dir / "maps.fits").string();
  io::write_fits_images(path, named_images());
  const auto cs = cases();
  for (std::size_t k = 0; k < cs.size(); ++k) {
    const auto& c = cs[k];
    INFO(c.name);
    const auto im = io::read_fits_image(path, c.name);
    CHECK(im.extname == c.name);
    CHECK(im.hdu_index == static_cast<int>(k) + 1);
    CHECK(im.image.nx() == c.nx);
    CHECK(im.image.ny() == c.ny);
    CHECK(im.image.unit() == c.unit);
    CHECK(im.image(5, 7) == 5 + 700 + 0.25);
    CHECK(im.image(c.nx - 1, c.ny - 1) == c.nx - 1 + 100 * (c.ny - 1) + 0.25);
    const auto a = im.image.anchor();
    CHECK(a.ra_deg == Approx(c.anchor.ra_deg).epsilon(1e-14));
    CHECK(a.dec_deg == Approx(c.anchor.dec_deg).epsilon(1e-14));
    CHECK(a.crpix1 == Approx(c.anchor.crpix1).epsilon(1e-14));
    CHECK(a.crpix2 == Approx(c.anchor.crpix2).epsilon(1e-14));
    CHECK(a.pixel_arcsec == Approx(c.anchor.pixel_arcsec).epsilon(1e-13));
    CHECK(im.wcs.rotation_deg() == Approx(0.0).margin(1e-12));
    CHECK(im.keyword("EXPOSURE") == "12500.");
    CHECK(im.keyword("LONGNOTE").substr(0, 10) == "xxxxxxxxxx");
    // The writer's WCS equals Wcs::from_anchor at a far pixel.
    const auto w2 = io::Wcs::from_anchor(c.anchor);
    const auto s1 = im.wcs.pixel_to_sky(1.0, 1.0), s2 = w2.pixel_to_sky(1.0, 1.0);
    CHECK(sep_arcsec(s1.ra_deg, s1.dec_deg, s2.ra_deg, s2.dec_deg) < 1e-9);
  }
  CHECK(io::read_fits_image(path).extname == "RATE");  // first 2-D image (the primary is empty)
  CHECK(io::read_fits_image(path, 2).extname == "EXPOSURE");
  CHECK(io::read_fits_image(path, "exposure").extname == "EXPOSURE");  // EXTNAME case-insensitive

  // Copies of a Wcs are deep and independent of the original's lifetime.
  io::Wcs copy;
  {
    const auto im = io::read_fits_image(path, "POLE");
    copy = im.wcs;
  }
  const auto s = copy.pixel_to_sky(15.5, 15.5);
  CHECK(s.dec_deg == Approx(-89.9).epsilon(1e-14));
}

TEST_CASE("FITS image errors name the file and HDU", "[io][fits_image]") {
  const auto dir = testing::scratch_dir("fits_image_errors");
  const auto path = (dir / "maps.fits").string();
  auto imgs = named_images();
  CHECK_THROWS_AS(io::write_fits_images((dir / "missing" / "x.fits").string(), imgs), core::OutputError);
  CHECK_THROWS_WITH(io::write_fits_images((dir / "missing" / "x.fits").string(), imgs),
                    Contains("x.fits") && Contains("does not exist"));
  auto dup = imgs;
  dup[1].extname = "rate";
  CHECK_THROWS_WITH(io::write_fits_images(path, dup), Contains("EXTNAME 'rate' used twice"));
  auto reserved = imgs;
  reserved[0].keywords.push_back(io::fits_key("CRVAL1", 1.0));
  CHECK_THROWS_WITH(io::write_fits_images(path, reserved), Contains("HDU RATE") && Contains("CRVAL1"));
  auto longkey = imgs;
  longkey[0].keywords.push_back(io::fits_key("TOOLONGKEY", 1.0));
  CHECK_THROWS_AS(io::write_fits_images(path, longkey), core::DomainError);
  auto nan = imgs;
  nan[0].keywords.push_back(io::fits_key("BAD", std::nan("")));
  CHECK_THROWS_AS(io::write_fits_images(path, nan), core::DomainError);
  auto badanchor = imgs;
  std::get<core::ImageD>(badanchor[0].image).set_anchor({0.0, 95.0, 1.0, 1.0, 1.0});
  CHECK_THROWS_AS(io::write_fits_images(path, badanchor), core::DomainError);
  CHECK(fs::is_empty(dir));  // nothing half-written

  io::write_fits_images(path, imgs);
  CHECK_THROWS_WITH(io::read_fits_image((dir / "none.fits").string()), Contains("none.fits: no such file"));
  CHECK_THROWS_WITH(io::read_fits_image(path, "NOPE"),
                    Contains(path + ", HDU NOPE: no image extension with this EXTNAME: CFITSIO status 301"));
  CHECK_THROWS_WITH(io::read_fits_image(path, 9), Contains("HDU 9 requested, the file has 6"));
  CHECK_THROWS_WITH(io::read_fits_image(path, 0), Contains("NAXIS = 0, expected a 2-D image"));
  CHECK_THROWS_AS(io::Wcs().pixel_to_sky(1.0, 1.0), core::DomainError);
}
