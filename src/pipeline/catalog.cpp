#include "icmscope/pipeline/catalog.hpp"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/fits_table.hpp"
#include "icmscope/pipeline/project_run.hpp"

namespace icmscope::pipeline {

namespace {

constexpr const char* kRecordHeader = "icmscope-survey-record 1";

std::string real_text(double v) {
  if (std::isnan(v)) return "nan";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char b[40];
  std::snprintf(b, sizeof b, "%.17g", v);
  return b;
}

// Record values are one line: escape backslash, tab, newline, carriage return.
std::string escape(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '\\': o += "\\\\"; break;
      case '\t': o += "\\t"; break;
      case '\n': o += "\\n"; break;
      case '\r': o += "\\r"; break;
      default: o += c;
    }
  }
  return o;
}

std::string unescape(const std::string& s) {
  std::string o;
  for (std::size_t i = 0; i < s.size(); ++i) {
    if (s[i] == '\\' && i + 1 < s.size()) {
      const char n = s[++i];
      o += n == 't' ? '\t' : n == 'n' ? '\n' : n == 'r' ? '\r' : n;
    } else {
      o += s[i];
    }
  }
  return o;
}

std::vector<std::string> split_tabs(const std::string& line) {
  std::vector<std::string> out;
  std::size_t b = 0;
  for (;;) {
    const std::size_t e = line.find('\t', b);
    if (e == std::string::npos) {
      out.push_back(line.substr(b));
      return out;
    }
    out.push_back(line.substr(b, e - b));
    b = e + 1;
  }
}

}  // namespace

// ---- rows --------------------------------------------------------------------

void CatalogRow::put(CatalogCell c) {
  const auto it = index_.find(c.column);
  if (it != index_.end()) {
    cells_[it->second] = std::move(c);
    return;
  }
  index_[c.column] = cells_.size();
  cells_.push_back(std::move(c));
}

void CatalogRow::text(const std::string& column, const std::string& value, const std::string& unit) {
  CatalogCell c;
  c.column = column;
  c.unit = unit;
  c.type = CellType::text;
  c.text = value;
  put(std::move(c));
}

void CatalogRow::integer(const std::string& column, long long value, const std::string& unit) {
  CatalogCell c;
  c.column = column;
  c.unit = unit;
  c.type = CellType::integer;
  c.integer = value;
  put(std::move(c));
}

void CatalogRow::real(const std::string& column, double value, const std::string& unit) {
  CatalogCell c;
  c.column = column;
  c.unit = unit;
  c.type = CellType::real;
  c.real = value;
  put(std::move(c));
}

const CatalogCell* CatalogRow::find(const std::string& column) const {
  const auto it = index_.find(column);
  return it == index_.end() ? nullptr : &cells_[it->second];
}

double CatalogRow::number(const std::string& column) const {
  const auto* c = find(column);
  if (!c) return std::nan("");
  if (c->type == CellType::real) return c->real;
  if (c->type == CellType::integer) return static_cast<double>(c->integer);
  return std::nan("");
}

std::string CatalogRow::str(const std::string& column) const {
  const auto* c = find(column);
  if (!c) return "";
  if (c->type == CellType::text) return c->text;
  if (c->type == CellType::integer) return std::to_string(c->integer);
  return real_text(c->real);
}

// ---- records -----------------------------------------------------------------

std::string format_record(const TargetRecord& r) {
  std::ostringstream o;
  o << kRecordHeader << "\n";
  o << "target_id\t" << escape(r.target_id) << "\n";
  o << "config_hash\t" << escape(r.config_hash) << "\n";
  o << "status\t" << (r.ok ? "ok" : "failed") << "\n";
  if (!r.ok) o << "reason\t" << escape(r.reason) << "\n";
  for (const auto& c : r.row.cells()) {
    o << "cell\t" << escape(c.column) << "\t";
    switch (c.type) {
      case CellType::text: o << "t\t" << escape(c.unit) << "\t" << escape(c.text); break;
      case CellType::integer: o << "i\t" << escape(c.unit) << "\t" << c.integer; break;
      case CellType::real: o << "r\t" << escape(c.unit) << "\t" << real_text(c.real); break;
    }
    o << "\n";
  }
  o << "end\n";
  return o.str();
}

std::optional<TargetRecord> parse_record(const std::string& text) {
  std::istringstream in(text);
  std::string line;
  if (!std::getline(in, line) || line != kRecordHeader) return std::nullopt;
  TargetRecord r;
  bool have_status = false, ended = false;
  while (std::getline(in, line)) {
    if (line == "end") {
      ended = true;
      break;
    }
    const auto f = split_tabs(line);
    if (f[0] == "target_id" && f.size() == 2) r.target_id = unescape(f[1]);
    else if (f[0] == "config_hash" && f.size() == 2) r.config_hash = unescape(f[1]);
    else if (f[0] == "status" && f.size() == 2) {
      if (f[1] != "ok" && f[1] != "failed") return std::nullopt;
      r.ok = f[1] == "ok";
      have_status = true;
    } else if (f[0] == "reason" && f.size() == 2) r.reason = unescape(f[1]);
    else if (f[0] == "cell" && f.size() == 5) {
      const std::string col = unescape(f[1]), unit = unescape(f[3]);
      if (f[2] == "t") r.row.text(col, unescape(f[4]), unit);
      else if (f[2] == "i") {
        char* end = nullptr;
        const long long v = std::strtoll(f[4].c_str(), &end, 10);
        if (end == f[4].c_str() || *end) return std::nullopt;
        r.row.integer(col, v, unit);
      } else if (f[2] == "r") {
        char* end = nullptr;
        const double v = std::strtod(f[4].c_str(), &end);
        if (end == f[4].c_str() || *end) return std::nullopt;
        r.row.real(col, v, unit);
      } else {
        return std::nullopt;
      }
    } else {
      return std::nullopt;
    }
  }
  if (!ended || !have_status || r.target_id.empty()) return std::nullopt;
  return r;
}

std::optional<TargetRecord> read_record(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return std::nullopt;
  std::ostringstream ss;
  ss << in.rdbuf();
  return parse_record(ss.str());
}

void write_record(const std::string& path, const TargetRecord& r) { write_text_file(path, format_record(r)); }

// ---- catalog -----------------------------------------------------------------

Catalog assemble_catalog(const std::vector<CatalogRow>& rows) {
  Catalog c;
  c.rows = rows;
  std::map<std::string, std::size_t> idx;
  std::map<std::string, std::size_t> present;
  for (const auto& r : rows)
    for (const auto& cell : r.cells()) {
      ++present[cell.column];
      const auto it = idx.find(cell.column);
      if (it == idx.end()) {
        idx[cell.column] = c.columns.size();
        c.columns.push_back({cell.column, cell.unit, cell.type});
        continue;
      }
      auto& col = c.columns[it->second];
      if (col.type == cell.type) continue;
      const bool numeric = col.type != CellType::text && cell.type != CellType::text;
      if (!numeric)
        throw core::DomainError("catalog column '" + cell.column + "' holds text in some rows and numbers in others");
      col.type = CellType::real;
    }
  for (auto& col : c.columns)
    if (col.type == CellType::integer && present[col.name] != rows.size()) col.type = CellType::real;
  if (c.columns.empty()) {  // no row yet: the identifying columns, so that the files are still valid tables
    c.columns.push_back({"target_index", "", CellType::integer});
    c.columns.push_back({"target_id", "", CellType::text});
  }
  return c;
}

std::string csv_field(const std::string& s) {
  const bool quote = s.find_first_of(",\"\n\r") != std::string::npos ||
                     (!s.empty() && (s.front() == ' ' || s.back() == ' '));
  if (!quote) return s;
  std::string o = "\"";
  for (char ch : s) {
    if (ch == '"') o += '"';
    o += ch;
  }
  return o + "\"";
}

std::string catalog_csv(const Catalog& c) {
  std::ostringstream o;
  for (std::size_t k = 0; k < c.columns.size(); ++k) o << (k ? "," : "") << csv_field(c.columns[k].name);
  o << "\n";
  for (const auto& r : c.rows) {
    for (std::size_t k = 0; k < c.columns.size(); ++k) {
      if (k) o << ",";
      const auto& col = c.columns[k];
      const CatalogCell* cell = r.find(col.name);
      if (!cell) continue;
      if (col.type == CellType::text) {
        o << csv_field(cell->text);
      } else if (col.type == CellType::integer) {
        o << cell->integer;
      } else {
        const double v = r.number(col.name);
        if (std::isfinite(v)) o << real_text(v);
        else if (std::isinf(v)) o << (v > 0 ? "inf" : "-inf");
      }
    }
    o << "\n";
  }
  return o.str();
}

void write_catalog_csv(const std::string& path, const Catalog& c) { write_text_file(path, catalog_csv(c)); }

void write_catalog_fits(const std::string& path, const Catalog& c, const std::vector<io::FitsKeyword>& keywords,
                        const std::string& extname) {
  io::FitsTable t;
  t.extname = extname;
  for (const auto& col : c.columns) {
    io::FitsColumn fc;
    fc.name = col.name;
    fc.unit = col.unit;
    if (col.type == CellType::text) {
      std::vector<std::string> v;
      for (const auto& r : c.rows) {
        const auto* cell = r.find(col.name);
        v.push_back(cell ? cell->text : std::string());
      }
      fc.data = std::move(v);
    } else if (col.type == CellType::integer) {
      std::vector<long long> v;
      for (const auto& r : c.rows) v.push_back(r.find(col.name)->integer);
      fc.data = std::move(v);
    } else {
      std::vector<double> v;
      for (const auto& r : c.rows) v.push_back(r.number(col.name));
      fc.data = std::move(v);
    }
    t.columns.push_back(std::move(fc));
  }
  t.keywords = keywords;
  io::write_fits_tables(path, {t}, keywords);
}

std::string catalog_columns_csv(const Catalog& c, const std::function<std::string(const std::string&)>& description) {
  std::ostringstream o;
  o << "name,type,unit,description\n";
  for (const auto& col : c.columns) {
    const char* ty = col.type == CellType::text ? "text" : col.type == CellType::integer ? "integer" : "real";
    o << csv_field(col.name) << "," << ty << "," << csv_field(col.unit) << ","
      << csv_field(description ? description(col.name) : std::string()) << "\n";
  }
  return o.str();
}

}  // namespace icmscope::pipeline
