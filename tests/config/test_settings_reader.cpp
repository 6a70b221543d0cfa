// Strict YAML reading: unknown keys with the nearest valid key, duplicates,
// wrong types and ranges named by key path, defaults recorded.
#include <catch2/catch.hpp>

#include <functional>

#include "icmscope/config/settings_reader.hpp"
#include "icmscope/core/errors.hpp"

using icmscope::config::Range;
using icmscope::config::SettingsFile;
using icmscope::core::ConfigError;

static std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const ConfigError& e) {
    return e.what();
  }
  return "";
}

TEST_CASE("unknown key names file:line:column and the nearest valid key", "[config]") {
  auto f = SettingsFile::parse("redshift: 0.1\nprojection:\n  pixles: 256\n", "run.yaml");
  auto root = f.root();
  root.number("redshift", 0.0, Range::non_negative());
  auto p = root.child("projection");
  p.integer("pixels", 512, Range::at_least(1));
  const std::string msg = error_of([&] { f.finish(); });
  CHECK(msg.find("run.yaml:3:3") != std::string::npos);
  CHECK(msg.find("projection.pixles") != std::string::npos);
  CHECK(msg.find("did you mean 'pixels'") != std::string::npos);
}

TEST_CASE("duplicate keys are rejected with their position", "[config]") {
  const std::string msg = error_of([] { SettingsFile::parse("a: 1\nb: 2\na: 3\n", "dup.yaml"); });
  CHECK(msg.find("dup.yaml:3:1") != std::string::npos);
  CHECK(msg.find("duplicate key 'a'") != std::string::npos);
  const std::string nested = error_of([] { SettingsFile::parse("s:\n  x: 1\n  x: 2\n", "dup.yaml"); });
  CHECK(nested.find("duplicate key 's.x'") != std::string::npos);
}

TEST_CASE("wrong types and out-of-range values are named by key path", "[config]") {
  auto f = SettingsFile::parse("target:\n  redshift: -0.2\n  name: A\n  pixels: 0\n  kT_keV: hot\n", "t.yaml");
  auto t = f.root().child("target");
  auto m1 = error_of([&] { t.number("redshift", std::nullopt, Range::non_negative()); });
  CHECK(m1.find("t.yaml:2:3: target.redshift: value -0.2 out of range (expected >= 0)") != std::string::npos);
  auto m2 = error_of([&] { t.integer("pixels", std::nullopt, Range::at_least(1)); });
  CHECK(m2.find("target.pixels") != std::string::npos);
  auto m3 = error_of([&] { t.number("kT_keV", std::nullopt, Range::positive()); });
  CHECK(m3.find("expected a finite number, got 'hot'") != std::string::npos);
  auto m4 = error_of([&] { t.number("missing_key"); });
  CHECK(m4.find("target.missing_key: missing required key") != std::string::npos);
  auto m5 = error_of([&] { t.choice("name", {"alpha", "beta"}); });
  CHECK(m5.find("expected one of: alpha, beta") != std::string::npos);
}

TEST_CASE("defaults are recorded and marked in the resolved YAML", "[config]") {
  auto f = SettingsFile::parse("a: 2\nlist:\n  - {x: 1}\n  - {x: 2}\n", "r.yaml", "/data/runs");
  auto r = f.root();
  CHECK(r.number("a") == 2.0);
  CHECK(r.number("b", 5.0) == 5.0);
  CHECK(r.path_value("file", std::string("cells.h5")) == "/data/runs/cells.h5");
  auto items = r.children("list");
  REQUIRE(items.size() == 2);
  CHECK(items[0].integer("x") == 1);
  CHECK(items[1].integer("x") == 2);
  f.finish();
  const auto y = f.resolved_yaml();
  CHECK(y.find("a: 2\n") != std::string::npos);
  CHECK(y.find("b: 5  # default") != std::string::npos);
  CHECK(y.find("list[1]:\n  x: 2") != std::string::npos);
  // The resolved text is itself valid YAML without duplicates.
  CHECK_NOTHROW(SettingsFile::parse(y, "resolved"));
  CHECK(f.resolved_hash().size() == 16);
}

TEST_CASE("syntax errors carry a line number", "[config]") {
  const std::string msg = error_of([] { SettingsFile::parse("a: [1, 2\nb: 3\n", "bad.yaml"); });
  CHECK(msg.find("bad.yaml:") != std::string::npos);
  CHECK(msg.find("YAML syntax error") != std::string::npos);
  CHECK(!error_of([] { SettingsFile::parse("", "empty.yaml"); }).empty());
  CHECK(!error_of([] { SettingsFile::load("/nonexistent/x.yaml"); }).empty());
}
