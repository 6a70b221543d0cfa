// Strict YAML reader: see include/icmscope/config/settings_reader.hpp.
#include "icmscope/config/settings_reader.hpp"

#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>

#include "icmscope/core/errors.hpp"

namespace icmscope::config {

using core::ConfigError;

bool Range::contains(double v) const {
  if (std::isnan(v)) return false;
  if (lo_open ? !(v > lo) : !(v >= lo)) return false;
  if (hi_open ? !(v < hi) : !(v <= hi)) return false;
  return true;
}

static std::string fmt_num(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.15g", v);
  return buf;
}

std::string Range::describe() const {
  const bool has_lo = std::isfinite(lo), has_hi = std::isfinite(hi);
  if (has_lo && has_hi)
    return std::string("in ") + (lo_open ? "(" : "[") + fmt_num(lo) + ", " + fmt_num(hi) + (hi_open ? ")" : "]");
  if (has_lo) return std::string(lo_open ? "> " : ">= ") + fmt_num(lo);
  if (has_hi) return std::string(hi_open ? "< " : "<= ") + fmt_num(hi);
  return "finite";
}

std::size_t edit_distance(const std::string& a, const std::string& b) {
  std::vector<std::size_t> prev(b.size() + 1), cur(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) prev[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    cur[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t sub = prev[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      cur[j] = std::min({prev[j] + 1, cur[j - 1] + 1, sub});
    }
    std::swap(prev, cur);
  }
  return prev[b.size()];
}

std::string nearest(const std::string& word, const std::vector<std::string>& candidates) {
  std::string best;
  std::size_t best_d = std::string::npos;
  for (const auto& c : candidates) {
    const std::size_t d = edit_distance(word, c);
    if (d < best_d) { best_d = d; best = c; }
  }
  // Accept when the typo is small relative to the word, or one is a prefix.
  if (best.empty()) return "";
  const std::size_t lim = std::max<std::size_t>(2, std::max(word.size(), best.size()) / 2);
  if (best_d <= lim) return best;
  if (best.rfind(word, 0) == 0 || word.rfind(best, 0) == 0) return best;
  return "";
}

// ---------------------------------------------------------------------------
struct SectionRecord {
  YAML::Node node;
  std::set<std::string> consumed;
};

struct SettingsFile::State {
  std::string file;
  std::string folder;
  YAML::Node root;
  std::map<std::string, SectionRecord> sections;  // by path
  std::vector<ResolvedEntry> resolved;
  std::set<std::string> resolved_paths;
};

struct Section::Impl {
  std::shared_ptr<SettingsFile::State> st;
  YAML::Node node;
  std::string path;
};

static std::string mark_text(const std::string& file, const YAML::Mark& m) {
  if (m.is_null()) return file;
  return file + ":" + std::to_string(m.line + 1) + ":" + std::to_string(m.column + 1);
}

static std::string join_path(const std::string& base, const std::string& key) {
  return base.empty() ? key : base + "." + key;
}

static void check_duplicates(const YAML::Node& n, const std::string& file, const std::string& path) {
  if (n.IsMap()) {
    std::set<std::string> seen;
    for (auto it = n.begin(); it != n.end(); ++it) {
      if (!it->first.IsScalar())
        throw ConfigError(mark_text(file, it->first.Mark()) + ": " + (path.empty() ? "top level" : path) +
                          ": map keys must be plain words");
      const std::string k = it->first.Scalar();
      if (!seen.insert(k).second)
        throw ConfigError(mark_text(file, it->first.Mark()) + ": duplicate key '" + join_path(path, k) +
                          "' (each key may appear once)");
      check_duplicates(it->second, file, join_path(path, k));
    }
  } else if (n.IsSequence()) {
    std::size_t i = 0;
    for (const auto& e : n) check_duplicates(static_cast<const YAML::Node&>(e), file, path + "[" + std::to_string(i++) + "]");
  }
}

static YAML::Node find_key(const YAML::Node& map, const std::string& key, YAML::Mark* key_mark = nullptr) {
  if (!map.IsMap()) return YAML::Node(YAML::NodeType::Undefined);
  for (auto it = map.begin(); it != map.end(); ++it) {
    if (it->first.IsScalar() && it->first.Scalar() == key) {
      if (key_mark) *key_mark = it->first.Mark();
      return it->second;
    }
  }
  return YAML::Node(YAML::NodeType::Undefined);
}

SettingsFile SettingsFile::parse(const std::string& text, const std::string& name, const std::string& folder) {
  SettingsFile f;
  f.state_ = std::make_shared<State>();
  f.state_->file = name;
  f.state_->folder = folder;
  try {
    f.state_->root = YAML::Load(text);
  } catch (const YAML::Exception& e) {
    throw ConfigError(mark_text(name, e.mark) + ": YAML syntax error: " + e.msg);
  }
  if (f.state_->root.IsNull() || !f.state_->root.IsDefined())
    throw ConfigError(name + ": the file is empty (expected a YAML map of settings)");
  if (!f.state_->root.IsMap())
    throw ConfigError(mark_text(name, f.state_->root.Mark()) + ": expected a YAML map of settings at the top level");
  check_duplicates(f.state_->root, name, "");
  f.state_->sections[""] = SectionRecord{f.state_->root, {}};
  return f;
}

SettingsFile SettingsFile::load(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw ConfigError(path + ": cannot open the settings file (expected a readable YAML file)");
  std::stringstream ss;
  ss << in.rdbuf();
  std::filesystem::path p(path);
  const std::string folder = p.has_parent_path() ? p.parent_path().string() : std::string(".");
  return parse(ss.str(), path, folder);
}

Section SettingsFile::root() const {
  Section s;
  s.impl_ = std::make_shared<Section::Impl>(Section::Impl{state_, state_->root, ""});
  return s;
}

const std::string& SettingsFile::file() const { return state_->file; }

void SettingsFile::finish() const {
  for (const auto& [path, rec] : state_->sections) {
    if (!rec.node.IsMap()) continue;
    std::vector<std::string> known(rec.consumed.begin(), rec.consumed.end());
    for (auto it = rec.node.begin(); it != rec.node.end(); ++it) {
      const std::string k = it->first.Scalar();
      if (rec.consumed.count(k)) continue;
      std::string msg = mark_text(state_->file, it->first.Mark()) + ": unknown key '" + join_path(path, k) + "'";
      const std::string near = nearest(k, known);
      if (!near.empty()) msg += " (did you mean '" + near + "'?)";
      else if (!known.empty()) {
        msg += " (valid here:";
        for (std::size_t i = 0; i < known.size() && i < 12; ++i) msg += " " + known[i];
        msg += ")";
      }
      throw ConfigError(msg);
    }
  }
}

std::vector<ResolvedEntry> SettingsFile::resolved() const { return state_->resolved; }

// Emit the resolved entries as nested YAML, defaults marked.
std::string SettingsFile::resolved_yaml() const {
  std::ostringstream os;
  os << "# Resolved configuration of " << state_->file << "\n# '# default' marks values not given in the file.\n";
  std::vector<std::string> open;  // currently open path components
  for (const auto& e : state_->resolved) {
    // split "a.b[2].c" into components "a", "b[2]", "c"
    std::vector<std::string> comp;
    std::string cur;
    for (char ch : e.path) {
      if (ch == '.') { comp.push_back(cur); cur.clear(); }
      else cur += ch;
    }
    comp.push_back(cur);
    std::size_t common = 0;
    while (common < open.size() && common + 1 < comp.size() && open[common] == comp[common]) ++common;
    open.resize(common);
    for (std::size_t i = common; i + 1 < comp.size(); ++i) {
      const std::string& c = comp[i];
      // List items appear as "name[i]:" keys: plain, readable YAML.
      os << std::string(2 * i, ' ') << comp[i] << ":\n";
      open.push_back(c);
    }
    os << std::string(2 * (comp.size() - 1), ' ') << comp.back() << ": " << e.value
       << (e.is_default ? "  # default" : "") << "\n";
  }
  return os.str();
}

std::string SettingsFile::resolved_hash() const {
  std::uint64_t h = 1469598103934665603ULL;
  for (const auto& e : state_->resolved) {
    for (char c : e.path + "=" + e.value + "\n") {
      h ^= static_cast<unsigned char>(c);
      h *= 1099511628211ULL;
    }
  }
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}

// ---------------------------------------------------------------------------
const std::string& Section::path() const { return impl_->path; }
const std::string& Section::file() const { return impl_->st->file; }

static void consume(const Section::Impl& im, const std::string& key) {
  auto& rec = im.st->sections[im.path];
  if (!rec.node.IsDefined() || rec.node.IsNull()) rec.node = im.node;
  rec.consumed.insert(key);
}

// "missing required key (...)", plus the likely misspelling when the map holds an unread key close to it
// (a typo of a required key would otherwise be reported as missing, not as the typo).
static std::string missing_hint(const Section::Impl& im, const std::string& key, const std::string& message) {
  if (!im.node.IsMap()) return message;
  const auto rec = im.st->sections.find(im.path);
  for (auto it = im.node.begin(); it != im.node.end(); ++it) {
    if (!it->first.IsScalar()) continue;
    const std::string k = it->first.Scalar();
    if (k == key || (rec != im.st->sections.end() && rec->second.consumed.count(k))) continue;
    if (nearest(k, {key}) == key)
      return message + "; is '" + k + "' at " + mark_text(im.st->file, it->first.Mark()) + " a misspelling of it?";
  }
  return message;
}

static void record(const Section::Impl& im, const std::string& key, const std::string& value, bool is_default) {
  const std::string p = join_path(im.path, key);
  if (im.st->resolved_paths.insert(p).second) im.st->resolved.push_back({p, value, is_default});
}

bool Section::has(const std::string& key) const {
  const YAML::Node n = find_key(impl_->node, key);
  return n.IsDefined() && !n.IsNull();
}
bool Section::is_map(const std::string& key) const { return find_key(impl_->node, key).IsMap(); }
bool Section::is_sequence(const std::string& key) const { return find_key(impl_->node, key).IsSequence(); }
bool Section::is_scalar(const std::string& key) const { return find_key(impl_->node, key).IsScalar(); }

std::string Section::where(const std::string& key) const {
  if (!key.empty()) {
    YAML::Mark m = YAML::Mark::null_mark();
    const YAML::Node n = find_key(impl_->node, key, &m);
    if (n.IsDefined()) return mark_text(impl_->st->file, m);
  }
  return mark_text(impl_->st->file, impl_->node.Mark());
}

void Section::fail(const std::string& key, const std::string& message) const {
  throw ConfigError(where(key) + ": " + join_path(impl_->path, key) + ": " + message);
}

void Section::accept(const std::string& key) const { consume(*impl_, key); }

static std::string scalar_of(const Section& s, const YAML::Node& n, const std::string& key, const char* expected) {
  if (!n.IsScalar()) s.fail(key, std::string("expected ") + expected + ", got a " + (n.IsMap() ? "map" : "list"));
  return n.Scalar();
}

static bool parse_double(const std::string& t, double& v, bool allow_inf = false) {
  if (t.empty()) return false;
  try {
    YAML::Node n(t);
    v = n.as<double>();
  } catch (...) {
    return false;
  }
  return std::isfinite(v) || (allow_inf && v == INFINITY);
}

double Section::number(const std::string& key, std::optional<double> def, Range range) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected a number " + range.describe() + ")"));
    record(*impl_, key, fmt_num(*def), true);
    return *def;
  }
  const std::string t = scalar_of(*this, n, key, "a number");
  double v = 0;
  if (!parse_double(t, v, range.allow_infinite))
    fail(key, std::string("expected a ") + (range.allow_infinite ? "number or .inf" : "finite number") + ", got '" +
                  t + "'");
  if (!range.contains(v)) fail(key, "value " + t + " out of range (expected " + range.describe() + ")");
  record(*impl_, key, fmt_num(v), false);
  return v;
}

std::int64_t Section::integer(const std::string& key, std::optional<std::int64_t> def, Range range) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected an integer " + range.describe() + ")"));
    record(*impl_, key, std::to_string(*def), true);
    return *def;
  }
  const std::string t = scalar_of(*this, n, key, "an integer");
  double v = 0;
  if (!parse_double(t, v) || std::floor(v) != v || std::fabs(v) > 9.0e15)
    fail(key, "expected an integer, got '" + t + "'");
  if (!range.contains(v)) fail(key, "value " + t + " out of range (expected " + range.describe() + ")");
  const auto iv = static_cast<std::int64_t>(v);
  record(*impl_, key, std::to_string(iv), false);
  return iv;
}

bool Section::flag(const std::string& key, std::optional<bool> def) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected true or false)"));
    record(*impl_, key, *def ? "true" : "false", true);
    return *def;
  }
  const std::string t = scalar_of(*this, n, key, "true or false");
  bool v = false;
  try {
    v = n.as<bool>();
  } catch (...) {
    fail(key, "expected true or false, got '" + t + "'");
  }
  record(*impl_, key, v ? "true" : "false", false);
  return v;
}

static std::string quote(const std::string& s) {
  std::string q = "\"";
  for (char c : s) {
    if (c == '"' || c == '\\') q += '\\';
    q += c;
  }
  return q + "\"";
}

std::string Section::text(const std::string& key, std::optional<std::string> def) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected a text value)"));
    record(*impl_, key, quote(*def), true);
    return *def;
  }
  const std::string t = scalar_of(*this, n, key, "a text value");
  record(*impl_, key, quote(t), false);
  return t;
}

std::string Section::choice(const std::string& key, const std::vector<std::string>& choices,
                            std::optional<std::string> def) const {
  std::string all;
  for (const auto& c : choices) all += (all.empty() ? "" : ", ") + c;
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected one of: " + all + ")"));
    record(*impl_, key, *def, true);
    return *def;
  }
  const std::string t = scalar_of(*this, n, key, "a word");
  if (std::find(choices.begin(), choices.end(), t) == choices.end()) {
    const std::string near = nearest(t, choices);
    fail(key, "'" + t + "' is not a valid choice (expected one of: " + all + ")" +
                  (near.empty() ? "" : "; did you mean '" + near + "'?"));
  }
  record(*impl_, key, t, false);
  return t;
}

std::string Section::path_value(const std::string& key, std::optional<std::string> def) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  std::string t;
  bool is_def = false;
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected a file path)"));
    t = *def;
    is_def = true;
  } else {
    t = scalar_of(*this, n, key, "a file path");
    if (t.empty()) fail(key, "expected a file path, got an empty value");
  }
  std::filesystem::path p(t);
  if (!t.empty() && p.is_relative()) p = std::filesystem::path(impl_->st->folder) / p;
  const std::string out = t.empty() ? t : p.lexically_normal().string();
  record(*impl_, key, quote(out), is_def);
  return out;
}

std::vector<double> Section::numbers(const std::string& key, std::optional<std::vector<double>> def, Range range,
                                     std::size_t min_len, std::size_t max_len) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  auto show = [](const std::vector<double>& v) {
    std::string s = "[";
    for (std::size_t i = 0; i < v.size(); ++i) s += (i ? ", " : "") + fmt_num(v[i]);
    return s + "]";
  };
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected a list of numbers)"));
    record(*impl_, key, show(*def), true);
    return *def;
  }
  std::vector<double> out;
  if (n.IsScalar()) {
    double v;
    if (!parse_double(n.Scalar(), v)) fail(key, "expected a list of numbers, got '" + n.Scalar() + "'");
    out.push_back(v);
  } else if (n.IsSequence()) {
    std::size_t i = 0;
    for (const auto& e : n) {
      double v;
      if (!e.IsScalar() || !parse_double(e.Scalar(), v))
        fail(key, "element " + std::to_string(i) + ": expected a finite number");
      out.push_back(v);
      ++i;
    }
  } else {
    fail(key, "expected a list of numbers, got a map");
  }
  for (std::size_t i = 0; i < out.size(); ++i)
    if (!range.contains(out[i]))
      fail(key, "element " + std::to_string(i) + " = " + fmt_num(out[i]) + " out of range (expected " +
                    range.describe() + ")");
  if (out.size() < min_len || out.size() > max_len) {
    std::string want = max_len == min_len ? std::to_string(min_len)
                       : max_len == std::numeric_limits<std::size_t>::max()
                           ? "at least " + std::to_string(min_len)
                           : std::to_string(min_len) + " to " + std::to_string(max_len);
    fail(key, "expected " + want + " numbers, got " + std::to_string(out.size()));
  }
  record(*impl_, key, show(out), false);
  return out;
}

std::vector<std::string> Section::texts(const std::string& key, std::optional<std::vector<std::string>> def) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  auto show = [](const std::vector<std::string>& v) {
    std::string s = "[";
    for (std::size_t i = 0; i < v.size(); ++i) s += (i ? ", " : "") + quote(v[i]);
    return s + "]";
  };
  if (!n.IsDefined() || n.IsNull()) {
    if (!def) fail(key, missing_hint(*impl_, key, "missing required key (expected a list of text values)"));
    record(*impl_, key, show(*def), true);
    return *def;
  }
  std::vector<std::string> out;
  if (n.IsScalar()) out.push_back(n.Scalar());
  else if (n.IsSequence()) {
    for (const auto& e : n) {
      if (!e.IsScalar()) fail(key, "expected a list of text values");
      out.push_back(e.Scalar());
    }
  } else fail(key, "expected a list of text values, got a map");
  record(*impl_, key, show(out), false);
  return out;
}

Section Section::child(const std::string& key) const {
  auto c = maybe_child(key);
  if (!c) fail(key, "missing required section (expected a map of settings)");
  return *c;
}

std::optional<Section> Section::maybe_child(const std::string& key) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  if (!n.IsDefined() || n.IsNull()) return std::nullopt;
  if (!n.IsMap()) fail(key, "expected a map of settings");
  Section s;
  const std::string p = join_path(impl_->path, key);
  s.impl_ = std::make_shared<Impl>(Impl{impl_->st, n, p});
  impl_->st->sections[p].node = n;
  return s;
}

std::vector<Section> Section::children(const std::string& key, bool allow_missing) const {
  consume(*impl_, key);
  const YAML::Node n = find_key(impl_->node, key);
  std::vector<Section> out;
  if (!n.IsDefined() || n.IsNull()) {
    if (!allow_missing) fail(key, "missing required list (expected a list of maps)");
    return out;
  }
  if (!n.IsSequence()) fail(key, "expected a list of maps");
  std::size_t i = 0;
  for (const auto& e : n) {
    const std::string p = join_path(impl_->path, key) + "[" + std::to_string(i) + "]";
    if (!e.IsMap()) throw ConfigError(mark_text(impl_->st->file, e.Mark()) + ": " + p + ": expected a map of settings");
    Section s;
    s.impl_ = std::make_shared<Impl>(Impl{impl_->st, static_cast<const YAML::Node&>(e), p});
    impl_->st->sections[p].node = static_cast<const YAML::Node&>(e);
    out.push_back(s);
    ++i;
  }
  return out;
}

std::vector<std::string> Section::keys() const {
  std::vector<std::string> out;
  if (!impl_->node.IsMap()) return out;
  for (auto it = impl_->node.begin(); it != impl_->node.end(); ++it) out.push_back(it->first.Scalar());
  return out;
}

}  // namespace icmscope::config
