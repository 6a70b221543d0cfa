// OGIP ARF / RMF readers against files written independently by astropy
// (from /usr/bin/python3): variable-length and fixed-vector rows, scalar
// columns, rows with N_GRP = 0, first channel 0 and 1, both matrix extension
// names; malformed files give InputErrors naming file, extension and column.
#include <catch2/catch.hpp>

#include <cmath>
#include <fstream>
#include <functional>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/ogip.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;

namespace {

// Writes the fixtures; for each RMF a text file "<name>.txt": line 1
// "n_e n_chan first_channel", then per energy row "lo hi v_0 ... v_{n-1}"
// (float32 values as stored), and "<name>.fold" with numpy's s @ M for
// s_i = 1 / (1 + i).
const char* kScript = R"PY(
import sys, numpy as np
from astropy.io import fits
out = sys.argv[1]
rng = np.random.default_rng(12345)

def ebounds(nch, first):
    ch = np.arange(first, first + nch, dtype=np.int32)
    emin = 0.01 * np.arange(nch); emax = emin + 0.01
    h = fits.BinTableHDU.from_columns([
        fits.Column(name='CHANNEL', format='1J', array=ch),
        fits.Column(name='E_MIN', format='1E', unit='keV', array=emin),
        fits.Column(name='E_MAX', format='1E', unit='keV', array=emax)], name='EBOUNDS')
    h.header['DETCHANS'] = nch; h.header['CHANTYPE'] = 'PI'
    return h

def random_groups(nch, ne, empty_rows):
    rows = []
    for i in range(ne):
        if i in empty_rows:
            rows.append([]); continue
        ng = 1 + (i % 3)
        starts = sorted(rng.choice(np.arange(0, nch - 8, 8), size=ng, replace=False))
        grp = []
        for s in starts:
            n = int(rng.integers(1, 8))
            grp.append((int(s), n, rng.random(n).astype(np.float32) * 0.3))
        rows.append(grp)
    return rows

def dump(name, lo, hi, rows, nch, first):
    M = np.zeros((len(lo), nch), dtype=np.float64)
    for i, grp in enumerate(rows):
        for (s, n, v) in grp:
            M[i, s:s + n] = v.astype(np.float64)
    with open(f'{out}/{name}.txt', 'w') as f:
        f.write(f'{len(lo)} {nch} {first}\n')
        for i in range(len(lo)):
            f.write(f'{lo[i]:.9g} {hi[i]:.9g} ' + ' '.join(f'{x:.9g}' for x in M[i]) + '\n')
    s = 1.0 / (1.0 + np.arange(len(lo)))
    np.savetxt(f'{out}/{name}.fold', s @ M)

def egrid(ne):
    e = np.linspace(0.1, 10.0, ne + 1).astype(np.float32)
    return e[:-1], e[1:]

# 1. Variable-length columns, extension MATRIX, first channel 0 (TLMIN = 0).
ne, nch = 40, 128
lo, hi = egrid(ne)
rows = random_groups(nch, ne, {0, 7, 39})
fc = [np.array([s for (s, n, v) in g], dtype=np.int32) for g in rows]
nc = [np.array([n for (s, n, v) in g], dtype=np.int32) for g in rows]
mv = [np.concatenate([v for (s, n, v) in g]).astype(np.float32) if g else np.zeros(0, np.float32) for g in rows]
m = fits.BinTableHDU.from_columns([
    fits.Column(name='ENERG_LO', format='1E', unit='keV', array=lo),
    fits.Column(name='ENERG_HI', format='1E', unit='keV', array=hi),
    fits.Column(name='N_GRP', format='1J', array=np.array([len(g) for g in rows], np.int32)),
    fits.Column(name='F_CHAN', format='PJ()', array=fc),
    fits.Column(name='N_CHAN', format='PJ()', array=nc),
    fits.Column(name='MATRIX', format='PE()', array=mv)], name='MATRIX')
m.header['TLMIN4'] = 0; m.header['TLMAX4'] = nch - 1; m.header['DETCHANS'] = nch
m.header['HDUCLASS'] = 'OGIP'; m.header['HDUCLAS1'] = 'RESPONSE'; m.header['HDUCLAS2'] = 'RSP_MATRIX'
fits.HDUList([fits.PrimaryHDU(), m, ebounds(nch, 0)]).writeto(f'{out}/vla0.rmf', overwrite=True)
dump('vla0', lo, hi, rows, nch, 0)

# 2. Fixed vectors (zero padded), extension SPECRESP MATRIX, first channel 1,
#    EBOUNDS before the matrix.
ne, nch, maxg = 30, 96, 3
lo, hi = egrid(ne)
rows = random_groups(nch, ne, {3, 4, 29})
F = np.zeros((ne, maxg), np.int32); N = np.zeros((ne, maxg), np.int32); W = np.zeros((ne, nch), np.float32)
for i, g in enumerate(rows):
    k = 0
    for j, (s, n, v) in enumerate(g):
        F[i, j] = s + 1; N[i, j] = n; W[i, k:k + n] = v; k += n
    W[i, k:] = 0.0
m = fits.BinTableHDU.from_columns([
    fits.Column(name='ENERG_LO', format='1E', unit='keV', array=lo),
    fits.Column(name='ENERG_HI', format='1E', unit='keV', array=hi),
    fits.Column(name='N_GRP', format='1I', array=np.array([len(g) for g in rows], np.int16)),
    fits.Column(name='F_CHAN', format=f'{maxg}J', array=F),
    fits.Column(name='N_CHAN', format=f'{maxg}J', array=N),
    fits.Column(name='MATRIX', format=f'{nch}E', array=W)], name='SPECRESP MATRIX')
m.header['TLMIN4'] = 1; m.header['DETCHANS'] = nch
fits.HDUList([fits.PrimaryHDU(), ebounds(nch, 1), m]).writeto(f'{out}/fixed1.rmf', overwrite=True)
dump('fixed1', lo, hi, rows, nch, 1)

# 3. Scalar F_CHAN / N_CHAN (one group per row), no TLMIN: the first channel
#    comes from EBOUNDS (1); one row with N_GRP = 0.
ne, nch = 20, 64
lo, hi = egrid(ne)
rows = []
for i in range(ne):
    if i == 5: rows.append([]); continue
    s = int(rng.integers(0, nch - 10)); n = int(rng.integers(1, 10))
    rows.append([(s, n, rng.random(n).astype(np.float32))])
W = np.zeros((ne, 10), np.float32)
for i, g in enumerate(rows):
    if g: W[i, :g[0][1]] = g[0][2]
m = fits.BinTableHDU.from_columns([
    fits.Column(name='ENERG_LO', format='1E', unit='keV', array=lo),
    fits.Column(name='ENERG_HI', format='1E', unit='keV', array=hi),
    fits.Column(name='N_GRP', format='1J', array=np.array([len(g) for g in rows], np.int32)),
    fits.Column(name='F_CHAN', format='1J', array=np.array([g[0][0] + 1 if g else 0 for g in rows], np.int32)),
    fits.Column(name='N_CHAN', format='1J', array=np.array([g[0][1] if g else 0 for g in rows], np.int32)),
    fits.Column(name='MATRIX', format='10E', array=W)], name='MATRIX')
m.header['DETCHANS'] = nch
fits.HDUList([fits.PrimaryHDU(), m, ebounds(nch, 1)]).writeto(f'{out}/scalar.rmf', overwrite=True)
dump('scalar', lo, hi, rows, nch, 1)

# ARF.
e = np.linspace(0.2, 8.0, 201)
area = (300.0 * np.exp(-0.5 * (np.log(0.5 * (e[:-1] + e[1:]) / 1.5) / 0.6) ** 2)).astype(np.float32)
def arf(name, lo, hi, a, cols=None, unit='keV'):
    c = [fits.Column(name='ENERG_LO', format='1E', unit=unit, array=lo),
         fits.Column(name='ENERG_HI', format='1E', unit=unit, array=hi),
         fits.Column(name='SPECRESP', format='1E', unit='cm**2', array=a)]
    if cols is not None: c = [x for x in c if x.name in cols]
    h = fits.BinTableHDU.from_columns(c, name='SPECRESP')
    h.header['HDUCLASS'] = 'OGIP'; h.header['HDUCLAS1'] = 'RESPONSE'; h.header['HDUCLAS2'] = 'SPECRESP'
    fits.HDUList([fits.PrimaryHDU(), h]).writeto(f'{out}/{name}', overwrite=True)
lo = e[:-1].astype(np.float32); hi = e[1:].astype(np.float32)
arf('good.arf', lo, hi, area)
np.savetxt(f'{out}/good.arf.txt', np.c_[lo, hi, area], fmt='%.9g')
blo = lo.copy(); bhi = hi.copy()
blo[[50, 51]] = lo[[51, 50]]; bhi[[50, 51]] = hi[[51, 50]]
arf('nonmono.arf', blo, bhi, area)
neg = area.copy(); neg[10] = -1.0
arf('negative.arf', lo, hi, neg)
arf('nocol.arf', lo, hi, area, cols=['ENERG_LO', 'ENERG_HI'])
arf('ev.arf', lo, hi, area, unit='eV')

# Bad RMFs: a missing column; MATRIX shorter than N_CHAN needs; a group beyond DETCHANS.
ne, nch = 5, 16
lo, hi = egrid(ne)
def rmf(name, cols, detchans=nch):
    h = fits.BinTableHDU.from_columns(cols, name='MATRIX'); h.header['DETCHANS'] = detchans; h.header['TLMIN4'] = 1
    fits.HDUList([fits.PrimaryHDU(), h, ebounds(detchans, 1)]).writeto(f'{out}/{name}', overwrite=True)
base = lambda: [fits.Column(name='ENERG_LO', format='1E', array=lo), fits.Column(name='ENERG_HI', format='1E', array=hi),
                fits.Column(name='N_GRP', format='1J', array=np.ones(ne, np.int32)),
                fits.Column(name='F_CHAN', format='1J', array=np.ones(ne, np.int32))]
rmf('nochan.rmf', base() + [fits.Column(name='MATRIX', format='4E', array=np.ones((ne, 4), np.float32))])
rmf('short.rmf', base() + [fits.Column(name='N_CHAN', format='1J', array=np.full(ne, 6, np.int32)),
                           fits.Column(name='MATRIX', format='4E', array=np.ones((ne, 4), np.float32))])
b = base(); b[3] = fits.Column(name='F_CHAN', format='1J', array=np.full(ne, 14, np.int32))
rmf('beyond.rmf', b + [fits.Column(name='N_CHAN', format='1J', array=np.full(ne, 4, np.int32)),
                       fits.Column(name='MATRIX', format='4E', array=np.ones((ne, 4), np.float32))])
open(f'{out}/text.rmf', 'w').write('not a FITS file\n')
print('ok')
)PY";

// One fixture directory per test case: ctest runs the cases as parallel processes.
fs::path fixtures(const std::string& tag) {
  static std::map<std::string, fs::path> dirs;
  fs::path& dir = dirs[tag];
  if (dir.empty()) {
    dir = testing::scratch_dir("ogip_" + tag);
    std::ofstream(dir / "make.py") << kScript;
    int st = 0;
    const std::string out =
        testing::run_capture(testing::python() + " " + (dir / "make.py").string() + " " + dir.string() + " 2>&1", &st);
    INFO(out);
    REQUIRE(st == 0);
  }
  return dir;
}

struct Dense {
  int ne = 0, nch = 0, first = 0;
  std::vector<double> lo, hi;
  std::vector<std::vector<double>> m;
};

Dense read_dense(const fs::path& p) {
  std::ifstream in(p);
  Dense d;
  in >> d.ne >> d.nch >> d.first;
  d.lo.resize(d.ne);
  d.hi.resize(d.ne);
  d.m.assign(d.ne, std::vector<double>(d.nch));
  for (int i = 0; i < d.ne; ++i) {
    in >> d.lo[i] >> d.hi[i];
    for (int j = 0; j < d.nch; ++j) in >> d.m[i][j];
  }
  return d;
}

std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const core::InputError& e) {
    return e.what();
  }
  return "no InputError";
}

void check_rmf(const std::string& name) {
  const fs::path dir = fixtures(name);
  const Dense d = read_dense(dir / (name + ".txt"));
  const instrument::ResponseMatrix m = io::read_rmf((dir / (name + ".rmf")).string());
  REQUIRE(static_cast<int>(m.n_energies()) == d.ne);
  REQUIRE(m.n_channels() == d.nch);
  CHECK(m.first_channel() == d.first);
  int empty_rows = 0;
  for (int i = 0; i < d.ne; ++i) {
    CHECK(m.energ_lo_keV()[i] == Approx(d.lo[i]).epsilon(1e-7));
    CHECK(m.energ_hi_keV()[i] == Approx(d.hi[i]).epsilon(1e-7));
    double s = 0;
    for (int j = 0; j < d.nch; ++j) {
      if (m.element(i, j) != Approx(d.m[i][j]).epsilon(1e-7).margin(1e-12))
        FAIL(name << ": element (" << i << ", " << j << ") = " << m.element(i, j) << ", astropy wrote " << d.m[i][j]);
      s += d.m[i][j];
    }
    CHECK(m.row_sum(i) == Approx(s).epsilon(1e-6));
    empty_rows += (s == 0.0);
  }
  CHECK(empty_rows > 0);
  // Folding against numpy's s @ M.
  std::vector<double> s(d.ne);
  for (int i = 0; i < d.ne; ++i) s[i] = 1.0 / (1.0 + i);
  const std::vector<double> c = m.fold(s);
  std::ifstream fin(dir / (name + ".fold"));
  for (int j = 0; j < d.nch; ++j) {
    double ref;
    fin >> ref;
    CHECK(c[j] == Approx(ref).epsilon(1e-6).margin(1e-12));
  }
  // EBOUNDS: channel energies 0.01 keV wide.
  REQUIRE(m.chan_e_min_keV().size() == static_cast<std::size_t>(d.nch));
  CHECK(m.channel_for_energy(0.015) == d.first + 1);
  // A drawn channel lies inside a group of the row and carries the channel offset.
  core::RandomStream rng(3, 3);
  for (int i = 0; i < d.ne; ++i) {
    const double E = 0.5 * (d.lo[i] + d.hi[i]);
    for (int k = 0; k < 20; ++k) {
      const int ch = m.draw_channel(E, rng);
      if (m.row_sum(i) == 0.0) {
        CHECK(ch == -1);
      } else if (ch < d.first || ch >= d.first + d.nch || d.m[i][ch - d.first] == 0.0) {
        FAIL(name << ": drew channel " << ch << " for row " << i);
      }
    }
  }
}

}  // namespace

TEST_CASE("RMF with variable-length rows, N_GRP = 0 rows and first channel 0", "[io][ogip][python]") {
  check_rmf("vla0");
}

TEST_CASE("RMF with zero-padded fixed vectors in SPECRESP MATRIX, first channel 1", "[io][ogip][python]") {
  check_rmf("fixed1");
}

TEST_CASE("RMF with scalar F_CHAN / N_CHAN and the first channel from EBOUNDS", "[io][ogip][python]") {
  check_rmf("scalar");
}

TEST_CASE("ARF written by astropy reads back bin for bin", "[io][ogip][python]") {
  const fs::path dir = fixtures("arf");
  const instrument::EffectiveArea a = io::read_arf((dir / "good.arf").string());
  std::ifstream in(dir / "good.arf.txt");
  double lo, hi, v;
  std::size_t i = 0;
  while (in >> lo >> hi >> v) {
    REQUIRE(i < a.size());
    CHECK(a.edges_keV()[i] == Approx(lo).epsilon(1e-7));
    CHECK(a.edges_keV()[i + 1] == Approx(hi).epsilon(1e-7));
    CHECK(a.area_cm2()[i] == Approx(v).epsilon(1e-7));
    ++i;
  }
  CHECK(i == a.size());
  CHECK(a.size() == 200);
  CHECK(a.origin().find("good.arf") != std::string::npos);
}

TEST_CASE("malformed OGIP files give InputErrors naming file, extension and column", "[io][ogip][python]") {
  const fs::path dir = fixtures("bad");
  auto arf = [&](const char* n) { return error_of([&] { io::read_arf((dir / n).string()); }); };
  auto rmf = [&](const char* n) { return error_of([&] { io::read_rmf((dir / n).string()); }); };

  const std::string nm = arf("nonmono.arf");
  CHECK_THAT(nm, Catch::Contains("nonmono.arf") && Catch::Contains("extension SPECRESP") &&
                     Catch::Contains("column ENERG_LO") && Catch::Contains("row 52") &&
                     Catch::Contains("monotonically increasing"));
  const std::string ng = arf("negative.arf");
  CHECK_THAT(ng, Catch::Contains("column SPECRESP") && Catch::Contains("row 11") && Catch::Contains(">= 0"));
  CHECK_THAT(arf("nocol.arf"), Catch::Contains("nocol.arf") && Catch::Contains("column SPECRESP is missing"));
  CHECK_THAT(arf("ev.arf"), Catch::Contains("column ENERG_LO") && Catch::Contains("expected keV"));
  CHECK_THAT(arf("vla0.rmf"), Catch::Contains("no SPECRESP extension"));
  CHECK_THAT(rmf("good.arf"), Catch::Contains("no MATRIX or SPECRESP MATRIX extension"));
  CHECK_THAT(rmf("nochan.rmf"), Catch::Contains("extension MATRIX") && Catch::Contains("column N_CHAN is missing"));
  CHECK_THAT(rmf("short.rmf"), Catch::Contains("column MATRIX") && Catch::Contains("row 1") &&
                                   Catch::Contains("N_CHAN needs 6"));
  CHECK_THAT(rmf("beyond.rmf"), Catch::Contains("column N_CHAN") && Catch::Contains("beyond the last channel 16"));
  CHECK_THAT(rmf("text.rmf"), Catch::Contains("text.rmf") && Catch::Contains("cannot open"));
  CHECK_THAT(rmf("missing.rmf"), Catch::Contains("missing.rmf"));
}
