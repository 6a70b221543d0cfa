#include "icmscope/io/fits_table.hpp"

#include <algorithm>
#include <set>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/fits_util.hpp"
#include "io/detail/fits_write.hpp"
#include "io/detail/temp_output.hpp"

namespace icmscope::io {

std::size_t FitsColumn::size() const {
  return std::visit([](const auto& v) { return v.size(); }, data);
}

namespace {

using detail::HduContext;

[[noreturn]] void fail_out(int st, const HduContext& ctx, const std::string& what) {
  detail::throw_fits(st, ctx.file, ctx.hdu, what, true);
}

void check_table(const std::string& path, const FitsTable& t, std::set<std::string>& extnames) {
  const std::string where = path + ", HDU " + t.extname;
  if (t.extname.empty() || t.extname.size() > 68)
    throw core::DomainError(path + ": every table needs an EXTNAME of 1-68 characters");
  if (!extnames.insert(detail::fits_upper(t.extname)).second)
    throw core::DomainError(path + ": EXTNAME '" + t.extname + "' used twice");
  if (t.columns.empty()) throw core::DomainError(where + ": table has no columns");
  if (t.columns.size() > 999) throw core::DomainError(where + ": more than 999 columns");
  std::set<std::string> names;
  const std::size_t n = t.columns.front().size();
  for (const auto& c : t.columns) {
    if (c.name.empty() || c.name.size() > 68) throw core::DomainError(where + ": column names must be 1-68 characters");
    if (!names.insert(detail::fits_upper(c.name)).second)
      throw core::DomainError(where + ": column '" + c.name + "' given twice");
    if (c.size() != n)
      throw core::DomainError(where + ": column '" + c.name + "' has " + std::to_string(c.size()) + " rows, '" +
                              t.columns.front().name + "' has " + std::to_string(n));
  }
  detail::check_keywords(t.keywords, where, false);
}

void write_table(fitsfile* f, const FitsTable& t, const HduContext& ctx) {
  const std::size_t ncol = t.columns.size();
  const LONGLONG nrows = static_cast<LONGLONG>(t.columns.front().size());
  std::vector<std::string> ttype(ncol), tform(ncol), tunit(ncol);
  for (std::size_t k = 0; k < ncol; ++k) {
    const FitsColumn& c = t.columns[k];
    ttype[k] = c.name;
    tunit[k] = c.unit;
    if (std::holds_alternative<std::vector<double>>(c.data)) {
      tform[k] = "1D";
    } else if (std::holds_alternative<std::vector<long long>>(c.data)) {
      tform[k] = "1K";
    } else {
      std::size_t w = 1;
      for (const auto& s : std::get<std::vector<std::string>>(c.data)) w = std::max(w, s.size());
      tform[k] = std::to_string(w) + "A";
    }
  }
  std::vector<char*> pt(ncol), pf(ncol), pu(ncol);
  for (std::size_t k = 0; k < ncol; ++k) {
    pt[k] = const_cast<char*>(ttype[k].c_str());
    pf[k] = const_cast<char*>(tform[k].c_str());
    pu[k] = const_cast<char*>(tunit[k].c_str());
  }
  int st = 0;
  if (fits_create_tbl(f, BINARY_TBL, 0, static_cast<int>(ncol), pt.data(), pf.data(), pu.data(),
                      t.extname.c_str(), &st))
    fail_out(st, ctx, "creating the table");
  detail::write_standard_keys(f, ctx);
  detail::write_keywords(f, t.keywords, ctx);
  detail::write_history(f, t.history, ctx);
  if (nrows > 0) {
    for (std::size_t k = 0; k < ncol; ++k) {
      const int colnum = static_cast<int>(k) + 1;
      const FitsColumn& c = t.columns[k];
      if (const auto* d = std::get_if<std::vector<double>>(&c.data)) {
        fits_write_col(f, TDOUBLE, colnum, 1, 1, nrows, const_cast<double*>(d->data()), &st);
      } else if (const auto* i = std::get_if<std::vector<long long>>(&c.data)) {
        std::vector<LONGLONG> buf(i->begin(), i->end());
        fits_write_col(f, TLONGLONG, colnum, 1, 1, nrows, buf.data(), &st);
      } else {
        const auto& s = std::get<std::vector<std::string>>(c.data);
        std::vector<char*> ps(s.size());
        for (std::size_t r = 0; r < s.size(); ++r) ps[r] = const_cast<char*>(s[r].c_str());
        fits_write_col(f, TSTRING, colnum, 1, 1, nrows, ps.data(), &st);
      }
      if (st) fail_out(st, ctx, "writing column '" + c.name + "'");
    }
  }
  detail::write_checksum(f, ctx);
}

}  // namespace

void write_fits_tables(const std::string& path, const std::vector<FitsTable>& tables,
                       const std::vector<FitsKeyword>& primary_keywords) {
  if (tables.empty()) throw core::DomainError(path + ": write_fits_tables needs at least one table");
  detail::check_keywords(primary_keywords, path + ", HDU PRIMARY", false);
  std::set<std::string> extnames;
  for (const auto& t : tables) check_table(path, t, extnames);

  detail::TempOutput tmp(path);
  {
    detail::FitsHandle f;
    int st = 0;
    HduContext ctx{path, "PRIMARY"};
    const std::string target = "!" + tmp.temp_path();
    if (fits_create_file(f.out(), target.c_str(), &st)) fail_out(st, ctx, "cannot create the file");
    if (fits_create_img(f.get(), BYTE_IMG, 0, nullptr, &st)) fail_out(st, ctx, "creating the primary HDU");
    detail::write_standard_keys(f.get(), ctx);
    detail::write_keywords(f.get(), primary_keywords, ctx);
    detail::write_checksum(f.get(), ctx);
    for (const auto& t : tables) {
      ctx.hdu = t.extname;
      write_table(f.get(), t, ctx);
    }
    ctx.hdu.clear();
    if (const int cst = f.close()) fail_out(cst, ctx, "closing the file");
  }
  tmp.commit();
}

}  // namespace icmscope::io
