// `icmscope measure` end to end on mock images written to FITS: the outputs
// parse in Python and agree with the table; an astropy-written image with a CD
// matrix and another reference pixel measures identically; masks (FITS image,
// sky circles from CSV and YAML) and chip gaps are handled; bad inputs fail
// with one line naming the file / field and leave no output behind; mocks can
// be re-realised from their expected image.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "icmscope/core/random.hpp"
#include "icmscope/io/fits_image.hpp"
#include "io/py_util.hpp"
#include "morphology/morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;
using testing::binary_dir;
using testing::run_capture;
using testing::run_python;
using testing::scratch_dir;

namespace {

constexpr double kPix = 4.0;     // arcsec
constexpr int kN = 160;          // pixels a side
constexpr double kRa = 150.0, kDec = 2.0;

std::string exe() { return (binary_dir() / "icmscope").string(); }

core::SkyAnchor anchor() { return {kRa, kDec, 0.5 * (kN + 1), 0.5 * (kN + 1), kPix}; }

// Expected counts: a beta model (rc 10 px), an offset clump and a flat background.
core::ImageD expected_counts(double bkg = 0.2) {
  const double c = 0.5 * (kN - 1) + 3.3;
  core::ImageD mu = testing::beta_image(kN, kN, c, c - 1.7, 10.0, 0.65, 60.0);
  const core::ImageD clump = testing::gaussian_image(kN, kN, c + 22, c - 9, 4, 3, 2500, 0.4);
  for (std::size_t i = 0; i < mu.size(); ++i) mu.pixels()[i] += clump.pixels()[i] + bkg;
  mu.set_anchor(anchor());
  return mu;
}

void write_image(const fs::path& p, const std::string& extname, core::ImageD img, const std::string& unit,
                 bool keywords = true) {
  img.set_anchor(anchor());
  img.set_unit(unit);
  io::NamedImage n;
  n.extname = extname;
  n.image = img;
  if (keywords) {
    n.keywords.push_back(io::fits_key("E_MIN", 0.5, "[keV]"));
    n.keywords.push_back(io::fits_key("E_MAX", 2.0, "[keV]"));
    n.keywords.push_back(io::fits_key("OBJECT", "Mock-1"));
  }
  io::write_fits_images(p.string(), {n});
}

struct Run {
  int status = 0;
  std::string out;  // stdout (the table)
  std::string err;  // stderr
};

Run measure(const std::string& args, const fs::path& dir) {
  Run r;
  const auto errf = dir / "stderr.txt";
  r.out = run_capture(exe() + " measure " + args + " 2>'" + errf.string() + "'", &r.status);
  std::ifstream f(errf);
  std::stringstream ss;
  ss << f.rdbuf();
  r.err = ss.str();
  fs::remove(errf);
  return r;
}

// Python: every raw indicator of two JSON files agrees to `rel` (numerical zeros
// below 1e-20 in both count as equal). Prints "compared N" or "MISMATCH ...".
const char* kCompare = R"PY(
import json, sys
a = json.load(open(sys.argv[1])); b = json.load(open(sys.argv[2])); rel = float(sys.argv[3])
skip = set(sys.argv[4].split(',')) if len(sys.argv) > 4 and sys.argv[4] else set()
ia = {(v['name'], v['aperture']): v for v in a['indicators']}
ib = {(v['name'], v['aperture']): v for v in b['indicators']}
assert ia.keys() == ib.keys(), 'different indicator sets'
n = 0
for k, va in ia.items():
    if k[0] in skip: continue
    x, y = va['raw'], ib[k]['raw']
    if x is None or y is None:
        if x != y: print('MISMATCH', k, x, y)
        continue
    if abs(x) < 1e-20 and abs(y) < 1e-20: n += 1; continue
    if abs(x - y) > rel * max(abs(x), abs(y)): print('MISMATCH', k, x, y, abs(x - y) / max(abs(x), abs(y)))
    n += 1
print('compared', n)
)PY";

std::string json_value(const fs::path& json, const std::string& expr) {
  return run_capture(testing::python() + " -c \"import json; d = json.load(open('" + json.string() + "')); print(" +
                     expr + ")\"");
}

}  // namespace

TEST_CASE("measure: JSON and CSV parse in Python and hold the numbers of the table", "[pipeline][measure]") {
  const auto dir = scratch_dir("measure_outputs");
  const core::ImageD mu = expected_counts();
  write_image(dir / "counts.fits", "COUNTS", testing::poisson_image(mu, 11), "count");
  const Run r = measure("--counts '" + (dir / "counts.fits").string() +
                            "' --redshift 0.1 --r500-kpc 500 --background-level 0.2 --realisations 24 --seed 5"
                            " --json '" + (dir / "m.json").string() + "' --csv '" + (dir / "m.csv").string() +
                            "' --png '" + (dir / "m.png").string() + "'",
                        dir);
  INFO(r.err);
  REQUIRE(r.status == 0);
  { std::ofstream(dir / "table.txt") << r.out; }
  // json and csv are the standard-library parsers (Python 3 documentation).
  const char* check = R"PY(
import json, csv, math, sys
d = json.load(open(sys.argv[1]))
rows = list(csv.DictReader(open(sys.argv[2], newline='')))
table = open(sys.argv[3]).read().splitlines()
def g6(v): return '-' if v is None else '%.6g' % v
def num(s): return None if s == '' else float(s)
# CSV indicator rows hold the JSON numbers exactly (both print 17 digits).
ind = {(r['name'], r['aperture']): r for r in rows if r['kind'] == 'indicator'}
assert len(ind) == len(d['indicators']), (len(ind), len(d['indicators']))
fields = ['raw', 'reference', 'mean', 'bias', 'corrected', 'p16', 'p84', 'sigma', 'significance']
for v in d['indicators']:
    r = ind[(v['name'], v['aperture'])]
    for f in fields:
        assert num(r[f]) == v[f], (v['name'], f, r[f], v[f])
    assert int(r['n_realisations']) == v['n_realisations']
# The table rows (indicators section) show the same numbers to 6 digits.
start = next(i for i, l in enumerate(table) if l.startswith('indicators ('))
rowsT = {}
for l in table[start + 2:]:
    if not l.strip(): break
    name, ap = l[2:28].strip(), l[29:42].strip()
    rowsT[(name, '' if ap == '-' else ap)] = l[42:].split()
checked = 0
for v in d['indicators']:
    t = rowsT[(v['name'], v['aperture'])]
    want = [g6(v[f]) for f in ['raw', 'corrected', 'bias', 'p16', 'p84', 'sigma', 'significance']] + [v['bias_mode']]
    assert t == want, (v['name'], v['aperture'], t, want)
    checked += 1
# Centre, classes, apertures.
pk = d['centre']['peak']
line = next(l for l in table if l.strip().startswith('peak '))
assert ('RA %.6f, Dec %.6f' % (pk['ra_deg'], pk['dec_deg'])) in line, line
cen = {r['name']: num(r['raw']) for r in rows if r['kind'] == 'centre'}
assert cen['peak_ra_deg'] == pk['ra_deg'] and cen['peak_x_pix'] == pk['x_pix']
labels = {r['name']: r['label'] for r in rows if r['kind'] == 'class'}
for c in d['classes']:
    assert c['available'], c
    assert labels[c['scheme']] == c['label']
    assert abs(sum(c['probability'].values()) - 1.0) < 1e-12
    l = next(l for l in table if l.startswith('  ' + c['scheme'] + ' '))
    assert c['label'] in l, l
aps = [r for r in rows if r['kind'] == 'aperture']
assert len(aps) == len(d['apertures'])
for r, a in zip(aps, d['apertures']):
    assert num(r['outer_px']) == a['outer']['px'] and num(r['outer_kpc']) == a['outer']['kpc']
    if a['outer']['kpc'] is not None:
        assert abs(a['outer']['arcsec'] * d['scale']['kpc_per_arcsec'] - a['outer']['kpc']) < 1e-9 * a['outer']['kpc']
assert d['band']['e_min_keV'] == 0.5 and d['band']['e_max_keV'] == 2.0
assert d['realisations']['number'] == 24 and d['realisations']['seed'] == 5
print('checked', checked)
)PY";
  const auto py = run_python(dir, "check_outputs", check,
                             "'" + (dir / "m.json").string() + "' '" + (dir / "m.csv").string() + "' '" +
                                 (dir / "table.txt").string() + "'");
  INFO(py.out);
  CHECK(py.status == 0);
  CHECK(py.out.find("checked") != std::string::npos);
  CHECK(fs::file_size(dir / "m.png") > 1000);
  // The R500 apertures of the table are in pixels what the cosmology says:
  // R500 = 500 kpc at z = 0.1 is 500 / 1.8443 arcsec (astropy FlatLambdaCDM(70, 0.3): 110.65771 kpc/arcmin,
  // reference standards.md) / 4 arcsec per pixel.
  const double r500_px = std::stod(json_value(dir / "m.json", "d['scale']['r500_px']"));
  CHECK(r500_px == Approx(500.0 / (110.65771 / 60.0) / kPix).epsilon(1e-6));
}

TEST_CASE("measure: an astropy image with a CD matrix and another reference pixel measures identically",
          "[pipeline][measure][wcs]") {
  const auto dir = scratch_dir("measure_wcs");
  const core::ImageD mu = expected_counts();
  write_image(dir / "own.fits", "COUNTS", testing::poisson_image(mu, 3), "count");
  // astropy rewrites the same pixels into a primary HDU: (1) a CD matrix (no CDELT)
  // with CRPIX moved and CRVAL recomputed so that the sky is the same; (2) the
  // same with the CD matrix rotated by 30 degrees (the sky rotates, the pixels not).
  const char* rewrite = R"PY(
import sys, numpy as np
from astropy.io import fits
from astropy.wcs import WCS
src, cd_out, rot_out = sys.argv[1:4]
with fits.open(src) as h:
    data = h['COUNTS'].data.astype(np.float64); hdr = h['COUNTS'].header
w = WCS(hdr)
crpix = (40.3, 131.7)
ra, dec = w.wcs_pix2world([[crpix[0], crpix[1]]], 1)[0]
s = abs(hdr['CDELT1'])
for out, rho in ((cd_out, 0.0), (rot_out, np.radians(30.0))):
    h = fits.Header()
    h['CTYPE1'] = 'RA---TAN'; h['CTYPE2'] = 'DEC--TAN'
    h['CRPIX1'] = crpix[0]; h['CRPIX2'] = crpix[1]; h['CRVAL1'] = ra; h['CRVAL2'] = dec
    h['CUNIT1'] = 'deg'; h['CUNIT2'] = 'deg'; h['RADESYS'] = 'ICRS'
    # Calabretta & Greisen 2002 eq. 189 with CDELT1 = -s, CDELT2 = s, CROTA2 = rho.
    h['CD1_1'] = -s * np.cos(rho); h['CD1_2'] = -s * np.sin(rho)
    h['CD2_1'] = -s * np.sin(rho); h['CD2_2'] = s * np.cos(rho)
    h['BUNIT'] = 'count'; h['E_MIN'] = 0.5; h['E_MAX'] = 2.0; h['OBJECT'] = 'Mock-1'
    fits.PrimaryHDU(data, h).writeto(out, overwrite=True)
print('written')
)PY";
  const auto w = run_python(dir, "rewrite", rewrite,
                            "'" + (dir / "own.fits").string() + "' '" + (dir / "cd.fits").string() + "' '" +
                                (dir / "rot.fits").string() + "'");
  INFO(w.out);
  REQUIRE(w.status == 0);
  const std::string common = " --redshift 0.1 --r500-kpc 500 --background-level 0.2 --realisations 0 --no-table";
  for (const char* f : {"own", "cd", "rot"}) {
    const Run r = measure("--counts '" + (dir / (std::string(f) + ".fits")).string() + "'" + common + " --json '" +
                              (dir / (std::string(f) + ".json")).string() + "'",
                          dir);
    INFO(f << ": " << r.err);
    REQUIRE(r.status == 0);
  }
  // Every raw indicator agrees to 1e-9 relative; the position angle of the
  // rotated file differs (checked below), so it is skipped there.
  auto py = run_python(dir, "compare_cd", kCompare,
                       "'" + (dir / "own.json").string() + "' '" + (dir / "cd.json").string() + "' 1e-9");
  INFO(py.out);
  CHECK(py.status == 0);
  CHECK(py.out.find("MISMATCH") == std::string::npos);
  CHECK(py.out.find("compared") != std::string::npos);
  py = run_python(dir, "compare_rot", kCompare,
                  "'" + (dir / "own.json").string() + "' '" + (dir / "rot.json").string() + "' 1e-9 pa_deg");
  INFO(py.out);
  CHECK(py.out.find("MISMATCH") == std::string::npos);
  // Sky positions and the position angle against astropy: the peak's RA/Dec
  // from each file's own WCS (astropy, 1-based pixels), and the PA east of north
  // of the major axis from two sky points along it (SkyCoord.position_angle).
  const char* sky = R"PY(
import json, sys, numpy as np
from astropy.io import fits
from astropy.wcs import WCS
from astropy.coordinates import SkyCoord
import astropy.units as u
bad = 0
for f in sys.argv[1:]:
    d = json.load(open(f + '.json'))
    hdr = fits.open(f + '.fits')['COUNTS' if f.endswith('own') else 0].header
    w = WCS(hdr)
    for key in ('peak', 'centroid'):
        p = d['centre'][key]
        ra, dec = w.wcs_pix2world([[p['x_pix'], p['y_pix']]], 1)[0]
        dd = SkyCoord(ra * u.deg, dec * u.deg).separation(SkyCoord(p['ra_deg'] * u.deg, p['dec_deg'] * u.deg)).arcsec
        if dd > 1e-6: print('SKY', f, key, dd); bad += 1
    th = np.radians(d['summary']['ellipticity_theta_pix_deg'])
    c = d['centre']['centroid']
    a = w.wcs_pix2world([[c['x_pix'], c['y_pix']], [c['x_pix'] + 1e-3 * np.cos(th), c['y_pix'] + 1e-3 * np.sin(th)]], 1)
    pa = SkyCoord(a[0][0] * u.deg, a[0][1] * u.deg).position_angle(SkyCoord(a[1][0] * u.deg, a[1][1] * u.deg)).deg % 180
    got = next(v['raw'] for v in d['indicators'] if v['name'] == 'pa_deg')
    diff = (got - pa + 90) % 180 - 90
    print(f, 'pa', got, 'astropy', pa)
    if abs(diff) > 0.01: print('PA', f, got, pa); bad += 1
print('bad', bad)
)PY";
  py = run_python(dir, "sky", sky,
                  "'" + (dir / "own").string() + "' '" + (dir / "cd").string() + "' '" + (dir / "rot").string() + "'");
  INFO(py.out);
  CHECK(py.status == 0);
  CHECK(py.out.find("bad 0") != std::string::npos);
  // The rotation shows up in the position angle: 30 degrees apart (mod 180).
  const double pa_own = std::stod(json_value(dir / "own.json", "[v['raw'] for v in d['indicators'] if v['name'] == 'pa_deg'][0]"));
  const double pa_rot = std::stod(json_value(dir / "rot.json", "[v['raw'] for v in d['indicators'] if v['name'] == 'pa_deg'][0]"));
  const double dpa = std::fmod(pa_rot - pa_own + 360.0 + 90.0, 180.0) - 90.0;
  CHECK(std::fabs(std::fabs(dpa) - 30.0) < 0.1);
}

TEST_CASE("measure: point sources masked by a FITS mask or sky circles, chip gaps of zero exposure",
          "[pipeline][measure][mask]") {
  const auto dir = scratch_dir("measure_mask");
  const core::ImageD mu = expected_counts();
  // A bright point source at (psx, psy) (0-based pixels), 6.3 px mask radius.
  const double psx = 0.5 * (kN - 1) - 18.4, psy = 0.5 * (kN - 1) + 14.2, rmask = 6.3;
  core::ImageD mu_ps = mu;
  const core::ImageD ps = testing::gaussian_image(kN, kN, psx, psy, 1.2, 1.2, 6000);
  for (std::size_t i = 0; i < mu.size(); ++i) mu_ps.pixels()[i] += ps.pixels()[i];
  // Same Poisson draws outside the source: the clean image plus the source's own counts.
  const core::ImageD clean = testing::poisson_image(mu, 21);
  core::ImageD with_ps = clean;
  const core::ImageD ps_counts = testing::poisson_image(ps, 22);
  for (std::size_t i = 0; i < mu.size(); ++i) with_ps.pixels()[i] += ps_counts.pixels()[i];
  write_image(dir / "clean.fits", "COUNTS", clean, "count");
  write_image(dir / "ps.fits", "COUNTS", with_ps, "count");
  core::ImageD mask(kN, kN, 1.0);
  for (int iy = 0; iy < kN; ++iy)
    for (int ix = 0; ix < kN; ++ix)
      if (std::hypot(ix - psx, iy - psy) <= rmask) mask(ix, iy) = 0.0;
  write_image(dir / "mask.fits", "MASK", mask, "", false);
  // The same circle in sky coordinates (FITS 1-based pixel = 0-based + 1; TAN of the anchor).
  const io::Wcs wcs = io::Wcs::from_anchor(anchor());
  const io::SkyPosition sp = wcs.pixel_to_sky(psx + 1.0, psy + 1.0);
  {
    std::ofstream f(dir / "circles.csv");
    f.precision(17);
    f << "ra_deg,dec_deg,radius_arcsec\n" << sp.ra_deg << "," << sp.dec_deg << "," << rmask * kPix << "\n";
  }
  {
    std::ofstream f(dir / "circles.yaml");
    f.precision(17);
    f << "inputs:\n  counts: ps.fits\n  background_level_counts_per_pixel: 0.2\n  mask_circles:\n"
      << "    - {ra_deg: " << sp.ra_deg << ", dec_deg: " << sp.dec_deg << ", radius_arcsec: " << rmask * kPix << "}\n"
      << "target: {redshift: 0.1, r500_kpc: 500}\nrealisations: {number: 0}\noutput: {json: yaml.json, table: false}\n";
  }
  const std::string common = " --redshift 0.1 --r500-kpc 500 --background-level 0.2 --realisations 0 --no-table";
  const auto run = [&](const std::string& counts, const std::string& extra, const std::string& json) {
    const Run r = measure("--counts '" + (dir / counts).string() + "'" + common + extra + " --json '" +
                              (dir / json).string() + "'",
                          dir);
    INFO(json << ": " << r.err);
    REQUIRE(r.status == 0);
  };
  run("clean.fits", "", "clean.json");
  run("ps.fits", "", "ps.json");
  run("ps.fits", " --mask '" + (dir / "mask.fits").string() + "'", "ps_mask.json");
  run("ps.fits", " --mask-circles '" + (dir / "circles.csv").string() + "'", "ps_circles.json");
  {
    const Run r = measure("'" + (dir / "circles.yaml").string() + "'", dir);
    INFO(r.err);
    REQUIRE(r.status == 0);
  }
  // The FITS mask, the CSV circle and the YAML circle mask the same pixels:
  // identical results.
  for (const char* other : {"ps_circles.json", "yaml.json"}) {
    const auto py = run_python(dir, "cmp_mask", kCompare,
                               "'" + (dir / "ps_mask.json").string() + "' '" + (dir / other).string() + "' 1e-12");
    INFO(other << "\n" << py.out);
    CHECK(py.out.find("MISMATCH") == std::string::npos);
    CHECK(py.out.find("compared") != std::string::npos);
  }
  CHECK(json_value(dir / "ps_mask.json", "d['inputs']['masked_pixels']") ==
        json_value(dir / "ps_circles.json", "d['inputs']['masked_pixels']"));
  // Masking removes the source's effect: the masked values sit much closer to
  // the clean image's than the unmasked ones (invariant: a refilled hole of a
  // smooth image barely moves the indicators).
  const char* closer = R"PY(
import json, sys
c, p, m = (json.load(open(f)) for f in sys.argv[1:4])
def val(d, n, a): return next(v['raw'] for v in d['indicators'] if v['name'] == n and v['aperture'] == a)
bad = 0
for n, a in (('w', 'R500'), ('P3/P0', 'R500'), ('P2/P0', 'R500'), ('A', 'R500'), ('c', '0.1/1 R500'), ('centroid_x', 'R500')):
    dc, dp, dm = val(c, n, a), val(p, n, a), val(m, n, a)
    ratio = abs(dm - dc) / abs(dp - dc)
    print(n, a, 'clean', dc, 'source', dp, 'masked', dm, 'ratio', ratio)
    if not ratio < 0.2: bad += 1
print('bad', bad)
)PY";
  auto py = run_python(dir, "closer", closer,
                       "'" + (dir / "clean.json").string() + "' '" + (dir / "ps.json").string() + "' '" +
                           (dir / "ps_mask.json").string() + "'");
  INFO(py.out);
  CHECK(py.out.find("bad 0") != std::string::npos);

  // Chip gap: a 5-pixel strip of zero exposure through the cluster, no counts there.
  core::ImageD expo(kN, kN, 2.0e4), gapped = clean;
  for (int iy = 0; iy < kN; ++iy)
    for (int ix = 88; ix < 93; ++ix) {
      expo(ix, iy) = 0.0;
      gapped(ix, iy) = 0.0;
    }
  write_image(dir / "gapped.fits", "COUNTS", gapped, "count");
  write_image(dir / "expo.fits", "EXPOSURE", expo, "s");
  run("gapped.fits", " --exposure '" + (dir / "expo.fits").string() + "'", "gap.json");
  run("gapped.fits", "", "gap_naive.json");  // the gap read as real zero counts
  py = run_python(dir, "closer_gap", closer,
                  "'" + (dir / "clean.json").string() + "' '" + (dir / "gap_naive.json").string() + "' '" +
                      (dir / "gap.json").string() + "'");
  INFO(py.out);
  CHECK(py.out.find("bad 0") != std::string::npos);
  CHECK(json_value(dir / "gap.json", "d['inputs']['gap_pixels']") == std::to_string(5 * kN) + "\n");
}

TEST_CASE("measure: bad inputs fail with one line naming the file or field, and write nothing",
          "[pipeline][measure][errors]") {
  const auto dir = scratch_dir("measure_errors");
  const core::ImageD mu = expected_counts();
  const core::ImageD counts = testing::poisson_image(mu, 4);
  write_image(dir / "counts.fits", "COUNTS", counts, "count");
  write_image(dir / "rate.fits", "RATE", counts, "count/s");
  write_image(dir / "expo_count.fits", "EXPOSURE", core::ImageD(kN, kN, 1.0), "count");
  write_image(dir / "expo_zero.fits", "EXPOSURE", core::ImageD(kN, kN, 0.0), "s");
  {
    core::ImageD small(kN - 10, kN, 1.0);
    io::NamedImage n{"EXPOSURE", small, {}, {}};
    io::write_fits_images((dir / "expo_small.fits").string(), {n});
  }
  {
    core::ImageD e(kN, kN, 1.0);
    core::SkyAnchor a = anchor();
    a.crpix1 += 5.0;  // same shape, shifted sky
    e.set_anchor(a);
    e.set_unit("s");
    io::NamedImage n{"EXPOSURE", e, {}, {}};
    io::write_fits_images((dir / "expo_shift.fits").string(), {n});
  }
  const char* make_bad = R"PY(
import sys, numpy as np
from astropy.io import fits
d = sys.argv[1]
img = np.ones((40, 40))
fits.PrimaryHDU(img).writeto(d + '/nowcs.fits', overwrite=True)
h = fits.Header(); h['CTYPE1'] = 'LINEAR'; h['CTYPE2'] = 'LINEAR'; h['CRPIX1'] = 1; h['CRPIX2'] = 1
h['CRVAL1'] = 0; h['CRVAL2'] = 0; h['CDELT1'] = 1; h['CDELT2'] = 1
fits.PrimaryHDU(img, h).writeto(d + '/linear.fits', overwrite=True)
fits.PrimaryHDU(np.zeros((0, 40))).writeto(d + '/empty.fits', overwrite=True)
print('ok')
)PY";
  REQUIRE(run_python(dir, "make_bad", make_bad, "'" + dir.string() + "'").status == 0);
  const fs::path outd = dir / "out";
  fs::create_directories(outd);
  const std::string outputs = " --json '" + (outd / "m.json").string() + "' --csv '" + (outd / "m.csv").string() +
                              "' --png '" + (outd / "m.png").string() + "'";
  const std::string c = "--counts '" + (dir / "counts.fits").string() + "' --redshift 0.1 --realisations 4";
  struct Case {
    const char* what;
    std::string args;
    std::vector<std::string> needles;  // each must appear in the message
  };
  const std::vector<Case> cases = {
      {"no WCS", "--counts '" + (dir / "nowcs.fits").string() + "' --redshift 0.1", {"nowcs.fits", "WCS", "inputs.counts"}},
      {"non-celestial WCS", "--counts '" + (dir / "linear.fits").string() + "' --redshift 0.1", {"linear.fits", "celestial"}},
      {"zero-size image", "--counts '" + (dir / "empty.fits").string() + "' --redshift 0.1", {"empty.fits", "inputs.counts"}},
      {"exposure on another grid", c + " --exposure '" + (dir / "expo_small.fits").string() + "'",
       {"expo_small.fits", "inputs.exposure", "grid"}},
      {"exposure with another WCS", c + " --exposure '" + (dir / "expo_shift.fits").string() + "'",
       {"expo_shift.fits", "WCS differs"}},
      {"all-zero exposure", c + " --exposure '" + (dir / "expo_zero.fits").string() + "'",
       {"expo_zero.fits", "no positive value", "inputs.exposure"}},
      {"centre outside the image", c + " --centre-ra-deg 151.5 --centre-dec-deg 2.0", {"target.centre", "counts.fits", "outside"}},
      {"counts BUNIT count/s", "--counts '" + (dir / "rate.fits").string() + "' --redshift 0.1",
       {"rate.fits", "count/s", "inputs.counts"}},
      {"exposure BUNIT count", c + " --exposure '" + (dir / "expo_count.fits").string() + "'",
       {"expo_count.fits", "BUNIT", "inputs.exposure"}},
      {"missing HDU", "--counts '" + (dir / "counts.fits").string() + "[NOPE]' --redshift 0.1", {"counts.fits", "NOPE"}},
      {"missing file", "--counts '" + (dir / "nothere.fits").string() + "' --redshift 0.1", {"nothere.fits"}},
      {"unknown preset", c + " --preset casano2010", {"casano2010", "cassano2010"}},
      {"expected source without expected image", c + " --source expected", {"inputs.expected"}},
      {"kpc apertures without redshift", "--counts '" + (dir / "counts.fits").string() + "' --realisations 0",
       {"redshift", "apertures"}},
  };
  for (const auto& k : cases) {
    const Run r = measure(k.args + outputs, dir);
    INFO(k.what << "\nstderr: " << r.err << "stdout: " << r.out);
    CHECK(r.status != 0);
    CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
    for (const auto& n : k.needles) CHECK(r.err.find(n) != std::string::npos);
    CHECK(fs::is_empty(outd));  // no output (and no temporary) left behind
  }
  // An R500 aperture without R500 names the aperture key.
  {
    std::ofstream(dir / "r500.yaml") << "inputs: {counts: counts.fits}\ntarget: {redshift: 0.1}\n"
                                     << "apertures: {asymmetry: \"1 R500\"}\n";
    const Run r = measure("'" + (dir / "r500.yaml").string() + "'" + outputs, dir);
    INFO(r.err);
    CHECK(r.status != 0);
    CHECK(r.err.find("apertures.asymmetry") != std::string::npos);
    CHECK(fs::is_empty(outd));
  }
  // An output directory that does not exist fails before any work.
  {
    const Run r = measure(c + " --json '" + (dir / "nodir" / "m.json").string() + "'", dir);
    CHECK(r.status != 0);
    CHECK(r.err.find("nodir") != std::string::npos);
  }
}

TEST_CASE("measure: realisations of a mock's expected image", "[pipeline][measure][expected]") {
  // Independent noise realisations of the noise-free expected image (morphology.md
  // sec. 10, the truth-level alternative for mocks): they do not depend on the
  // observed counts, and the reference is the value of the expected image itself.
  const auto dir = scratch_dir("measure_expected");
  const core::ImageD mu = expected_counts();
  write_image(dir / "model.fits", "MODEL", mu, "count");
  write_image(dir / "obs1.fits", "COUNTS", testing::poisson_image(mu, 31), "count");
  write_image(dir / "obs2.fits", "COUNTS", testing::poisson_image(mu, 32), "count");
  const std::string base = " --redshift 0.1 --r500-kpc 500 --background-level 0.2 --seed 9 --no-table --expected '" +
                           (dir / "model.fits").string() + "'";
  const std::string common = base + " --realisations 40";
  for (const char* f : {"obs1", "obs2"}) {
    const Run r = measure("--counts '" + (dir / (std::string(f) + ".fits")).string() + "'" + common +
                              " --source expected --json '" + (dir / (std::string(f) + ".json")).string() + "'",
                          dir);
    INFO(r.err);
    REQUIRE(r.status == 0);
  }
  {
    const Run r = measure("--counts '" + (dir / "model.fits").string() + "'" + base + " --realisations 0 --json '" +
                              (dir / "truth.json").string() + "'",
                          dir);
    INFO(r.err);
    REQUIRE(r.status == 0);
  }
  const char* check = R"PY(
import json, sys
a, b, t = (json.load(open(f)) for f in sys.argv[1:4])
def ind(d): return {(v['name'], v['aperture']): v for v in d['indicators']}
ia, ib, it = ind(a), ind(b), ind(t)
bad = 0
for k in (('c', '0.1/1 R500'), ('c', '40/400 kpc'), ('w', 'R500'), ('P2/P0', 'R500'), ('gini', 'R500')):
    # The same seed draws the same realisations of the same expected image:
    # percentiles agree whatever the observed counts (to 1e-6: the iterated
    # centroids start from the observed image's and stop within 1e-7 px; other
    # noise draws would differ by ~ sigma, i.e. by percent).
    for f in ('p16', 'p84'):
        if abs(ia[k][f] - ib[k][f]) > 1e-6 * abs(ia[k][f]): print('DIFF', k, f, ia[k][f], ib[k][f]); bad += 1
    # The reference is the noise-free value (the expected image measured directly).
    if abs(ia[k]['reference'] - it[k]['raw']) > 1e-9 * abs(it[k]['raw']): print('REF', k, ia[k]['reference'], it[k]['raw']); bad += 1
# Concentration is nearly unbiased: the realisation mean lies within 4 standard errors of the truth.
for k in (('c', '0.1/1 R500'), ('c', '40/400 kpc')):
    se = ia[k]['sigma'] / 40 ** 0.5
    if abs(ia[k]['mean'] - it[k]['raw']) > 4 * se: print('MEAN', k, ia[k]['mean'], it[k]['raw'], se); bad += 1
assert a['realisations']['source'] == 'expected' and a['inputs']['expected'].endswith('model.fits[MODEL]')
print('bad', bad)
)PY";
  const auto py = run_python(dir, "check_expected", check,
                             "'" + (dir / "obs1.json").string() + "' '" + (dir / "obs2.json").string() + "' '" +
                                 (dir / "truth.json").string() + "'");
  INFO(py.out);
  CHECK(py.status == 0);
  CHECK(py.out.find("bad 0") != std::string::npos);
}

TEST_CASE("measure: the printed example runs on the products of the observe example", "[pipeline][measure][examples]") {
  // `icmscope measure --example` names the products of
  // config/examples/observe_cool_core_vasta.yaml relative to its own folder.
  const auto dir = scratch_dir("measure_printed");
  int st = 0;
  const std::string text = run_capture(exe() + " measure --example", &st);
  REQUIRE(st == 0);
  { std::ofstream(dir / "printed.yaml") << text; }
  const std::string obs =
      run_capture(exe() + " observe -q '" + (testing::source_dir() / "config" / "examples" / "observe_cool_core_vasta.yaml").string() +
                      "' --output-dir '" + (dir / "out").string() + "' --particles 20000 --no-events 2>&1",
                  &st);
  INFO(obs);
  REQUIRE(st == 0);
  const Run r = measure("'" + (dir / "printed.yaml").string() + "' --realisations 8", dir);
  INFO(r.err);
  CHECK(r.status == 0);
  CHECK(r.out.find("icmscope measure: Maren-7") != std::string::npos);
  for (const char* f : {"out/Maren-7_measure.json", "out/Maren-7_measure.csv", "out/Maren-7_measure.png"})
    CHECK(fs::file_size(dir / f) > 100);
}
