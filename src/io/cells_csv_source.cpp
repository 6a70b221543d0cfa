// CSV column source for read_cells: a header row of column names, '#'
// comment lines and blank lines skipped, comma-separated numeric fields,
// streamed in row chunks. Errors name the 1-based line number.
#include <cerrno>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>
#include <unordered_map>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/cells_source.hpp"

namespace icmscope::io::detail {

namespace {

using core::InputError;

std::string trim(const std::string& s) {
  std::size_t b = 0, e = s.size();
  while (b < e && (s[b] == ' ' || s[b] == '\t' || s[b] == '\r')) ++b;
  while (e > b && (s[e - 1] == ' ' || s[e - 1] == '\t' || s[e - 1] == '\r')) --e;
  return s.substr(b, e - b);
}

std::string unquote(const std::string& s) {
  if (s.size() >= 2 && ((s.front() == '"' && s.back() == '"') || (s.front() == '\'' && s.back() == '\'')))
    return s.substr(1, s.size() - 2);
  return s;
}

// Splits a line at commas (no quoted commas in this numeric format).
void split_fields(const std::string& line, std::vector<std::string>& out) {
  out.clear();
  std::size_t start = 0;
  while (true) {
    const std::size_t c = line.find(',', start);
    if (c == std::string::npos) {
      out.push_back(line.substr(start));
      break;
    }
    out.push_back(line.substr(start, c - start));
    start = c + 1;
  }
}

bool skippable(const std::string& line) {
  for (char ch : line) {
    if (ch == '#') return true;
    if (ch != ' ' && ch != '\t' && ch != '\r') return false;
  }
  return true;  // blank
}

class CsvSource final : public ColumnSource {
 public:
  explicit CsvSource(const std::string& path) : path_(path) {
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) throw InputError(path + ": no such file");
    in_.open(path);
    if (!in_) throw InputError(path + ": cannot open for reading");
    std::string line;
    while (std::getline(in_, line)) {
      ++line_no_;
      if (skippable(line)) continue;
      std::vector<std::string> f;
      split_fields(line, f);
      for (std::size_t i = 0; i < f.size(); ++i) {
        std::string name = unquote(trim(f[i]));
        if (name.empty())
          throw InputError(path + ": line " + std::to_string(line_no_) + ": header column " +
                           std::to_string(i + 1) + " has no name");
        if (index_.count(name))
          throw InputError(path + ": line " + std::to_string(line_no_) + ": duplicate column name '" + name + "'");
        index_[name] = i;
        names_.push_back(name);
      }
      return;
    }
    throw InputError(path + ": no header row (expected a line of comma-separated column names)");
  }

  std::vector<bool> open(const std::vector<ColumnRequest>& req) override {
    std::vector<bool> present(req.size(), false);
    col_of_.assign(req.size(), -1);
    for (std::size_t k = 0; k < req.size(); ++k) {
      const ColumnRequest& r = req[k];
      if (r.width != 1)
        throw core::ConfigError(path_ + ": " + r.field + " names one 3-component source '" + r.name +
                                "', but CSV columns are scalars: name three columns (x, y, z)");
      auto it = index_.find(r.name);
      if (it == index_.end()) {
        if (r.optional) continue;
        std::string avail;
        for (const auto& n : names_) avail += (avail.empty() ? "" : ", ") + n;
        throw InputError(path_ + ": column '" + r.name + "' (" + r.field + ") not found; header has: " + avail);
      }
      col_of_[k] = static_cast<long>(it->second);
      present[k] = true;
    }
    return present;
  }

  std::size_t rows_hint() const override { return 0; }

  std::size_t next(std::size_t max_rows, std::vector<std::vector<double>>& out) override {
    out.resize(col_of_.size());
    for (std::size_t k = 0; k < col_of_.size(); ++k) {
      out[k].clear();
      if (col_of_[k] >= 0) out[k].reserve(max_rows);
    }
    std::size_t n = 0;
    std::string line;
    std::vector<std::string> f;
    while (n < max_rows && std::getline(in_, line)) {
      ++line_no_;
      if (skippable(line)) continue;
      split_fields(line, f);
      if (f.size() != names_.size())
        throw InputError(path_ + ": line " + std::to_string(line_no_) + ": " + std::to_string(f.size()) +
                         " fields, the header has " + std::to_string(names_.size()));
      for (std::size_t k = 0; k < col_of_.size(); ++k) {
        if (col_of_[k] < 0) continue;
        const std::size_t c = static_cast<std::size_t>(col_of_[k]);
        out[k].push_back(parse(f[c], c));
      }
      ++n;
    }
    if (in_.bad()) throw InputError(path_ + ": read error after line " + std::to_string(line_no_));
    return n;
  }

  bool read_number(const std::string& spec, double*) override {
    throw core::ConfigError(path_ + ": CSV files carry no metadata: cannot read '" + spec +
                            "'; give the value in the field map");
  }
  bool read_text(const std::string& spec, std::string*) override {
    throw core::ConfigError(path_ + ": CSV files carry no metadata: cannot read '" + spec + "'");
  }

 private:
  double parse(const std::string& raw, std::size_t col) const {
    const std::string s = trim(raw);
    if (s.empty())
      throw InputError(path_ + ": line " + std::to_string(line_no_) + ", column '" + names_[col] +
                       "': empty field (expected a number)");
    const char* b = s.c_str();
    char* e = nullptr;
    errno = 0;
    const double v = std::strtod(b, &e);
    if (e == b || *e != '\0')
      throw InputError(path_ + ": line " + std::to_string(line_no_) + ", column '" + names_[col] + "': '" + s +
                       "' is not a number");
    return v;  // out-of-range values become +-inf / 0 and are caught by validation
  }

  std::string path_;
  std::ifstream in_;
  std::size_t line_no_ = 0;
  std::vector<std::string> names_;
  std::unordered_map<std::string, std::size_t> index_;
  std::vector<long> col_of_;
};

}  // namespace

std::unique_ptr<ColumnSource> open_csv_cells(const std::string& path) {
  return std::make_unique<CsvSource>(path);
}

}  // namespace icmscope::io::detail
