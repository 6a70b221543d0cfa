#pragma once
// CFITSIO helpers private to the io library: every non-zero status becomes a
// typed exception naming the file and the HDU, with CFITSIO's own messages.
#include <fitsio.h>

#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::io::detail {

// CFITSIO's text for `status` plus the messages on its error stack (which is
// emptied).
inline std::string fits_message(int status) {
  char text[FLEN_STATUS] = {0};
  fits_get_errstatus(status, text);
  std::string msg = "CFITSIO status " + std::to_string(status) + " (" + text + ")";
  char buf[FLEN_ERRMSG];
  std::string stack;
  while (fits_read_errmsg(buf)) {
    std::string s(buf);
    while (!s.empty() && (s.back() == ' ' || s.back() == '\n')) s.pop_back();
    if (s.empty()) continue;
    if (!stack.empty()) stack += "; ";
    stack += s;
  }
  if (!stack.empty()) msg += ": " + stack;
  return msg;
}

// "<file>, HDU <hdu>: <what>: CFITSIO status ..." as an OutputError or InputError.
[[noreturn]] inline void throw_fits(int status, const std::string& file, const std::string& hdu,
                                    const std::string& what, bool output) {
  std::string m = file;
  if (!hdu.empty()) m += ", HDU " + hdu;
  m += ": " + what + ": " + fits_message(status);
  if (output) throw core::OutputError(m);
  throw core::InputError(m);
}

// Owns a fitsfile* and closes it (ignoring errors) unless released.
class FitsHandle {
 public:
  FitsHandle() = default;
  FitsHandle(const FitsHandle&) = delete;
  FitsHandle& operator=(const FitsHandle&) = delete;
  ~FitsHandle() { close_quietly(); }
  fitsfile** out() { return &f_; }
  fitsfile* get() const { return f_; }
  void close_quietly() {
    if (f_) {
      int st = 0;
      fits_close_file(f_, &st);
      f_ = nullptr;
      fits_clear_errmsg();
    }
  }
  // Closes and reports the status of the close (0 = fine).
  int close() {
    int st = 0;
    if (f_) fits_close_file(f_, &st);
    f_ = nullptr;
    return st;
  }

 private:
  fitsfile* f_ = nullptr;
};

// Current UTC time as FITS DATE (yyyy-mm-ddThh:mm:ss).
inline std::string fits_date_now() {
  char date[FLEN_VALUE] = {0};
  int timeref = 0, st = 0;
  fits_get_system_time(date, &timeref, &st);
  return date;
}

}  // namespace icmscope::io::detail
