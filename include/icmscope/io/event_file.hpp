#pragma once
// Photon event lists as FITS files (OGIP/94-003 style):
//   primary HDU (empty): the caller's keywords, HISTORY, DATE, CREATOR, checksum;
//   EVENTS binary table: TIME (1D, s), X, Y (1D, FITS 1-based sky pixels of the
//     grid the events belong to), RA, DEC (1D, deg), ENERGY (1E, keV), PI (1J),
//     COMPONENT (1B, the simulation's component tag), with
//     - the sky WCS of X/Y as column keywords TCTYPn (RA---TAN / DEC--TAN),
//       TCUNIn (deg), TCRVLn, TCRPXn, TCDLTn (-pixel/3600, +pixel/3600), ICRS
//       (pixel-list convention of Greisen & Calabretta 2002; RADESYS as RADE2 / RADE3);
//     - TLMIN = 0.5, TLMAX = N + 0.5 on X and Y (so binned images keep CRPIX),
//       TLMIN / TLMAX of PI = the channel range;
//     - HDUCLASS OGIP, HDUCLAS1 EVENTS, TSTART, TSTOP, EXPOSURE (live time),
//       ONTIME, LIVETIME, MJDREF, TIMESYS, TIMEUNIT, TIMEREF;
//   GTI binary table: START, STOP (1D, s), HDUCLAS1 GTI, same time keywords.
// Written under a temporary name and renamed when complete.
#include <string>
#include <vector>

#include "icmscope/instrument/realise.hpp"
#include "icmscope/io/fits_keywords.hpp"

namespace icmscope::io {

struct EventFileSpec {
  std::vector<instrument::Gti> gti;     // non-empty, increasing
  int pi_min = 1;                        // TLMIN / TLMAX of PI
  int pi_max = 1024;
  double exposure_s = 0.0;               // live time (EXPOSURE, LIVETIME); ONTIME = sum of the GTIs
  double mjdref = 60000.0;               // MJD of TIME = 0
  std::string timesys = "TT";
  std::vector<FitsKeyword> keywords;     // written to the primary, EVENTS and GTI headers (TELESCOP, OBJECT ...)
  std::vector<std::string> history;      // primary and EVENTS HISTORY (e.g. the resolved configuration)
};

// DomainError for inconsistent arguments (columns of different lengths, empty
// grid, bad GTIs, reserved keywords); OutputError naming the file on a write failure.
void write_event_file(const std::string& path, const instrument::EventList& events, const EventFileSpec& spec);

struct EventFile {
  instrument::EventList events;          // nx, ny from TLMAX of X / Y, anchor from the column WCS
  std::vector<instrument::Gti> gti;
  double exposure_s = 0.0, tstart_s = 0.0, tstop_s = 0.0, mjdref = 0.0;
  int pi_min = 0, pi_max = 0;
};

// Reads a file written by write_event_file (or any EVENTS table with TIME, X,
// Y, PI, optional ENERGY and COMPONENT, and TLMAX on X / Y). InputError naming
// the file and the column otherwise.
EventFile read_event_file(const std::string& path);

}  // namespace icmscope::io
