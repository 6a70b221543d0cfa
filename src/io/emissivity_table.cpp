#include "icmscope/io/emissivity_table.hpp"

#include <fitsio.h>

#include <unistd.h>

#include <cstdio>
#include <limits>
#include <filesystem>

#include "detail/fits_util.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/fits_table.hpp"

namespace icmscope::io {

using detail::FitsHandle;
using detail::throw_fits;

static std::vector<double> read_column(fitsfile* f, const std::string& path, const std::string& hdu,
                                       const std::string& col) {
  int st = 0;
  if (fits_movnam_hdu(f, BINARY_TBL, const_cast<char*>(hdu.c_str()), 0, &st))
    throw_fits(st, path, hdu, "missing binary table extension '" + hdu + "'", false);
  int colnum = 0;
  if (fits_get_colnum(f, CASEINSEN, const_cast<char*>(col.c_str()), &colnum, &st))
    throw_fits(st, path, hdu, "missing column '" + col + "'", false);
  long nrows = 0;
  fits_get_num_rows(f, &nrows, &st);
  std::vector<double> v(static_cast<std::size_t>(nrows));
  int anynul = 0;
  if (nrows > 0 && fits_read_col(f, TDOUBLE, colnum, 1, 1, nrows, nullptr, v.data(), &anynul, &st))
    throw_fits(st, path, hdu, "cannot read column '" + col + "'", false);
  return v;
}

emission::EmissivityGrid read_emissivity_table(const std::string& path) {
  if (!std::filesystem::exists(path))
    throw core::InputError(path + ": emissivity table not found (expected a FITS file in icmscope's layout)");
  FitsHandle h;
  int st = 0;
  if (fits_open_file(h.out(), path.c_str(), READONLY, &st)) throw_fits(st, path, "", "cannot open", false);
  fitsfile* f = h.get();
  emission::EmissivityGrid g;
  g.kT_keV = read_column(f, path, "KT_GRID", "KT_KEV");
  g.Z_solar = read_column(f, path, "Z_GRID", "Z_SOLAR");
  g.E_lo_keV = read_column(f, path, "ENERGY_BINS", "E_LO_KEV");
  g.E_hi_keV = read_column(f, path, "ENERGY_BINS", "E_HI_KEV");
  if (fits_movnam_hdu(f, IMAGE_HDU, const_cast<char*>("EMISSIVITY"), 0, &st))
    throw_fits(st, path, "EMISSIVITY", "missing image extension 'EMISSIVITY'", false);
  int naxis = 0;
  long naxes[3] = {0, 0, 0};
  fits_get_img_dim(f, &naxis, &st);
  if (naxis != 3)
    throw core::InputError(path + ", HDU EMISSIVITY: expected a 3-D image (n_E x n_Z x n_T), got NAXIS = " +
                           std::to_string(naxis));
  fits_get_img_size(f, 3, naxes, &st);
  if (static_cast<std::size_t>(naxes[0]) != g.E_lo_keV.size() ||
      static_cast<std::size_t>(naxes[1]) != g.Z_solar.size() || static_cast<std::size_t>(naxes[2]) != g.kT_keV.size())
    throw core::InputError(path + ", HDU EMISSIVITY: image shape " + std::to_string(naxes[0]) + " x " +
                           std::to_string(naxes[1]) + " x " + std::to_string(naxes[2]) +
                           " does not match the grids (n_E x n_Z x n_T = " + std::to_string(g.E_lo_keV.size()) +
                           " x " + std::to_string(g.Z_solar.size()) + " x " + std::to_string(g.kT_keV.size()) + ")");
  g.values.resize(static_cast<std::size_t>(naxes[0] * naxes[1] * naxes[2]));
  int anynul = 0;
  double nulval = std::numeric_limits<double>::quiet_NaN();
  if (fits_read_img(f, TDOUBLE, 1, static_cast<LONGLONG>(g.values.size()), &nulval, g.values.data(), &anynul, &st))
    throw_fits(st, path, "EMISSIVITY", "cannot read the image", false);
  try {
    g.validate();
  } catch (const core::Error& e) {
    throw core::InputError(path + ": " + e.what());
  }
  return g;
}

void write_emissivity_table(const std::string& path, const emission::EmissivityGrid& grid,
                            const std::string& abundance_set) {
  grid.validate();
  // Tables first (through the table writer), then append the image HDU.
  std::vector<FitsTable> tables(3);
  tables[0].extname = "KT_GRID";
  tables[0].columns.push_back({"KT_KEV", "keV", grid.kT_keV});
  tables[1].extname = "Z_GRID";
  tables[1].columns.push_back({"Z_SOLAR", "", grid.Z_solar});
  tables[2].extname = "ENERGY_BINS";
  tables[2].columns.push_back({"E_LO_KEV", "keV", grid.E_lo_keV});
  tables[2].columns.push_back({"E_HI_KEV", "keV", grid.E_hi_keV});
  const std::string tmp = path + ".tmp-" + std::to_string(::getpid());
  write_fits_tables(tmp, tables);
  FitsHandle h;
  int st = 0;
  if (fits_open_file(h.out(), tmp.c_str(), READWRITE, &st)) throw_fits(st, path, "", "cannot reopen", true);
  long naxes[3] = {static_cast<long>(grid.n_E()), static_cast<long>(grid.n_Z()), static_cast<long>(grid.n_kT())};
  fits_create_img(h.get(), DOUBLE_IMG, 3, naxes, &st);
  fits_write_key(h.get(), TSTRING, "EXTNAME", const_cast<char*>("EMISSIVITY"), nullptr, &st);
  fits_write_key(h.get(), TSTRING, "BUNIT", const_cast<char*>("photon cm3 / s"),
                 const_cast<char*>("per energy bin, per unit n_e n_H V"), &st);
  if (!abundance_set.empty())
    fits_write_key(h.get(), TSTRING, "ABUNDSET", const_cast<char*>(abundance_set.c_str()), nullptr, &st);
  fits_write_img(h.get(), TDOUBLE, 1, static_cast<LONGLONG>(grid.values.size()),
                 const_cast<double*>(grid.values.data()), &st);
  fits_write_chksum(h.get(), &st);
  if (st) {
    h.close_quietly();
    std::remove(tmp.c_str());
    throw_fits(st, path, "EMISSIVITY", "cannot write the image", true);
  }
  if (int cst = h.close()) {
    std::remove(tmp.c_str());
    throw_fits(cst, path, "", "cannot close", true);
  }
  std::error_code ec;
  std::filesystem::rename(tmp, path, ec);
  if (ec) {
    std::remove(tmp.c_str());
    throw core::OutputError(path + ": cannot rename the finished file: " + ec.message());
  }
}

}  // namespace icmscope::io
