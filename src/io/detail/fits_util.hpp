#pragma once
// CFITSIO helpers private to the io library: every non-zero status becomes a
// typed exception naming the file and the HDU, with CFITSIO's own messages.
#include <fitsio.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
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

// The data of the current HDU must lie in the file: a damaged NAXISn, NAXIS2 or
// PCOUNT would otherwise size an allocation the file cannot fill (gigabytes for
// a few-kB file; tests/data/fuzz_regressions). The padding of the last HDU to a
// multiple of 2880 bytes may be missing, as CFITSIO reads such files.
inline void require_data_in_file(fitsfile* f, const std::string& file, const std::string& hdu) {
  LONGLONG head = 0, start = 0, end = 0;
  int st = 0;
  if (fits_get_hduaddrll(f, &head, &start, &end, &st)) throw_fits(st, file, hdu, "reading the HDU address", false);
  const LONGLONG size = f->Fptr->logfilesize;
  if (end - size >= 2880) {
    std::string m = file;
    if (!hdu.empty()) m += ", HDU " + hdu;
    throw core::InputError(m + ": the header declares " + std::to_string(end - start) +
                           " bytes of data but the file ends " + std::to_string(size > start ? size - start : 0) +
                           " bytes after the header (truncated file, or damaged NAXISn / PCOUNT)");
  }
}

// Pre-check of the header cards of every HDU, before CFITSIO parses them.
// CFITSIO 4.2 copies keyword values into fixed-size column buffers without a
// length check: a TTYPEn / TUNITn card whose value is not a quoted string and
// fills the card overflows one (ffgtbp; found by fuzz/fuzz_ogip_response,
// tests/data/fuzz_regressions). An unquoted value must be a logical, a number
// or a complex pair (FITS 4.0, section 4.2); long unquoted values that are
// none of these are refused here, short sloppy ones (DATE = 2020-01-01) are
// left to CFITSIO. An extension header must also hold PCOUNT and GCOUNT with
// integer values (mandatory, FITS 4.0 sections 7.1-7.3): without them CFITSIO
// 4.2 sizes an allocation from an uninitialised variable (ffgttb; valgrind,
// tests/data/fuzz_regressions/ogip_response/cfitsio_calloc_damaged_gcount.fits).
// Files that do not start with a plain FITS header (e.g. compressed ones) and
// damaged block structures are left to CFITSIO too.
inline void check_fits_cards(const std::string& path) {
  std::FILE* fp = std::fopen(path.c_str(), "rb");
  if (!fp) return;
  struct Closer {
    std::FILE* f;
    ~Closer() { std::fclose(f); }
  } closer{fp};
  auto int_value = [](const char* card, long long& v) {
    char buf[71];
    std::memcpy(buf, card + 10, 70);
    buf[70] = 0;
    char* e = nullptr;
    v = std::strtoll(buf, &e, 10);
    return e != buf;
  };
  char block[2880];
  for (int hdu = 0;; ++hdu) {
    long long bitpix = 0, naxis = 0, pcount = 0, gcount = 1, n1 = 1, n2plus = 1;
    bool end = false, has_pcount = false, has_gcount = false;
    for (long card_no = 1; !end; ) {
      if (std::fread(block, 1, 2880, fp) != 2880) return;
      if (hdu == 0 && card_no == 1 && std::memcmp(block, "SIMPLE  =", 9) != 0) return;
      if (hdu > 0 && card_no == 1 && std::memcmp(block, "XTENSION=", 9) != 0) return;  // not a header: CFITSIO's call
      for (int c = 0; c < 36; ++c, ++card_no) {
        const char* k = block + 80 * c;
        if (std::memcmp(k, "END     ", 8) == 0) {
          end = true;
          break;
        }
        if (k[8] != '=') continue;  // CFITSIO parses a value even without the blank in column 10
        int i = 9;
        while (i < 80 && k[i] == ' ') ++i;
        if (i < 80 && k[i] != '\'' && k[i] != '/') {
          int e = i;
          while (e < 80 && k[e] != '/') ++e;
          while (e > i && k[e - 1] == ' ') --e;
          std::string tok(k + i, k + e);
          for (char& ch : tok)
            if (ch == 'D' || ch == 'd') ch = 'E';
          char* stop = nullptr;
          std::strtod(tok.c_str(), &stop);
          const bool number = stop && *stop == 0 && !tok.empty();
          if (tok.size() > 20 && !number && tok.front() != '(') {
            std::string key(k, 8);
            while (!key.empty() && key.back() == ' ') key.pop_back();
            throw core::InputError(path + ", HDU " + std::to_string(hdu) + ", card " + std::to_string(card_no) +
                                   " (" + key + "): unquoted value of " + std::to_string(tok.size()) +
                                   " characters that is not a number or logical (FITS 4.0, section 4.2)");
          }
        }
        long long v = 0;
        if (std::memcmp(k, "BITPIX  ", 8) == 0 && int_value(k, v)) bitpix = v;
        else if (std::memcmp(k, "NAXIS   ", 8) == 0 && int_value(k, v)) naxis = v;
        else if (std::memcmp(k, "PCOUNT  ", 8) == 0 && int_value(k, v)) pcount = v, has_pcount = true;
        else if (std::memcmp(k, "GCOUNT  ", 8) == 0 && int_value(k, v)) gcount = v, has_gcount = true;
        else if (std::memcmp(k, "NAXIS", 5) == 0 && k[5] >= '1' && k[5] <= '9' && int_value(k, v)) {
          const int axis = std::atoi(std::string(k + 5, 3).c_str());
          if (v < 0 || v > (1LL << 40)) return;
          if (axis == 1) n1 = v;
          else if (axis > 1 && axis <= 999) n2plus = n2plus * v > (1LL << 50) ? (1LL << 50) : n2plus * v;
        }
      }
    }
    if (hdu > 0 && (!has_pcount || !has_gcount))
      throw core::InputError(path + ", HDU " + std::to_string(hdu) + ": no " + (has_pcount ? "GCOUNT" : "PCOUNT") +
                             " card with an integer value (mandatory in an extension header, FITS 4.0 section 7)");
    // Skip the data (random groups: NAXIS1 = 0) to the next header.
    if (bitpix == 0 || pcount < 0 || gcount < 0 || pcount > (1LL << 50) || gcount > (1LL << 20)) return;
    const long double cells = naxis == 0 ? 0.0L : static_cast<long double>(n1 == 0 ? 1 : n1) * n2plus;
    const long double bytes = (bitpix < 0 ? -bitpix : bitpix) / 8.0L * gcount * (pcount + cells);
    const long double padded = std::ceil(bytes / 2880.0L) * 2880.0L;
    if (padded > 9e15L) return;
    if (std::fseek(fp, static_cast<long>(padded), SEEK_CUR) != 0) return;
    const int next = std::fgetc(fp);
    if (next == EOF) return;
    std::ungetc(next, fp);
  }
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
