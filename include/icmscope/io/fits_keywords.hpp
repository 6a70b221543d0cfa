#pragma once
// FITS header keywords for the FITS writers (images and tables).
#include <string>
#include <variant>
#include <vector>

namespace icmscope::io {

// A header value: logical, integer, real (must be finite) or string
// (strings longer than 68 characters use the CONTINUE long-string convention).
using FitsValue = std::variant<bool, long long, double, std::string>;

struct FitsKeyword {
  std::string key;  // 1-8 characters of A-Z 0-9 - _ (lower case is upper-cased)
  FitsValue value;
  std::string comment;
};

// Convenience constructors that pick the value type.
inline FitsKeyword fits_key(std::string key, double v, std::string comment = "") {
  return {std::move(key), v, std::move(comment)};
}
inline FitsKeyword fits_key(std::string key, int v, std::string comment = "") {
  return {std::move(key), static_cast<long long>(v), std::move(comment)};
}
inline FitsKeyword fits_key(std::string key, long long v, std::string comment = "") {
  return {std::move(key), v, std::move(comment)};
}
inline FitsKeyword fits_key(std::string key, bool v, std::string comment = "") {
  return {std::move(key), v, std::move(comment)};
}
inline FitsKeyword fits_key(std::string key, std::string v, std::string comment = "") {
  return {std::move(key), std::move(v), std::move(comment)};
}
inline FitsKeyword fits_key(std::string key, const char* v, std::string comment = "") {
  return {std::move(key), std::string(v), std::move(comment)};
}

}  // namespace icmscope::io
