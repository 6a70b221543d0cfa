#pragma once
// A small FITS binary-table writer for catalogs and truth lists: columns of
// double (TFORM 1D), 64-bit integer (1K) or string (nA, n = the longest
// string, at least 1), each with a unit (TUNITn). Layout: an empty primary
// HDU (DATE, CREATOR, the caller's primary keywords, checksum) then one
// BINTABLE extension per table with EXTNAME, keywords, HISTORY and
// DATASUM/CHECKSUM. Written under a temporary name and renamed when complete.
#include <string>
#include <variant>
#include <vector>

#include "icmscope/io/fits_keywords.hpp"

namespace icmscope::io {

struct FitsColumn {
  std::string name;  // TTYPEn, non-empty, unique within the table (case-insensitive)
  std::string unit;  // TUNITn in the FITS convention ("keV", "arcsec", "count/s"); "" = none
  std::variant<std::vector<double>, std::vector<long long>, std::vector<std::string>> data;
  std::size_t size() const;
};

struct FitsTable {
  std::string extname;
  std::vector<FitsColumn> columns;  // all of the same length (0 rows allowed)
  std::vector<FitsKeyword> keywords;
  std::vector<std::string> history;
};

// Throws core::DomainError for bad arguments (no table, no columns, unequal
// lengths, duplicate names, reserved keywords) and core::OutputError naming
// the file, the HDU and the CFITSIO message on a write failure.
void write_fits_tables(const std::string& path, const std::vector<FitsTable>& tables,
                       const std::vector<FitsKeyword>& primary_keywords = {});

}  // namespace icmscope::io
