#pragma once
// Physical and astronomical constants, CGS. The one place constants live.
// Sources: CODATA 2018 (NIST), IAU 2012/2015 resolutions (au, pc, nominal Msun).
namespace icmscope::core::constants {

inline constexpr double kPi = 3.14159265358979323846;
inline constexpr double kEulerGamma = 0.57721566490153286061;

inline constexpr double c_cm_s = 2.99792458e10;          // speed of light [cm/s] (exact)
inline constexpr double c_km_s = 2.99792458e5;           // [km/s]
inline constexpr double h_erg_s = 6.62607015e-27;        // Planck [erg s] (exact)
inline constexpr double k_B_erg_K = 1.380649e-16;        // Boltzmann [erg/K] (exact)
inline constexpr double m_e_g = 9.1093837015e-28;        // electron mass [g]
inline constexpr double m_p_g = 1.67262192369e-24;       // proton mass [g]
inline constexpr double m_u_g = 1.66053906660e-24;       // atomic mass unit [g]
inline constexpr double e_esu = 4.80320471e-10;          // elementary charge [esu]
inline constexpr double G_cgs = 6.67430e-8;              // gravitation [cm^3 g^-1 s^-2]
inline constexpr double Ry_keV = 13.605693122994e-3;     // Rydberg energy [keV]

inline constexpr double keV_erg = 1.602176634e-9;        // 1 keV in erg (exact)
inline constexpr double keV_K = keV_erg / k_B_erg_K;     // 1 keV in kelvin = 1.160452e7
inline constexpr double keV_Hz = keV_erg / h_erg_s;      // 1 keV photon frequency [Hz]

inline constexpr double au_cm = 1.495978707e13;          // IAU 2012 (exact)
inline constexpr double pc_cm = 3.0856775814913673e18;   // 648000/pi au
inline constexpr double kpc_cm = 1e3 * pc_cm;
inline constexpr double Mpc_cm = 1e6 * pc_cm;
inline constexpr double Msun_g = 1.98840987e33;          // G M_sun / G (IAU 2015 nominal / CODATA G)
inline constexpr double yr_s = 3.15576e7;                // Julian year
inline constexpr double Gyr_s = 1e9 * yr_s;

inline constexpr double arcsec_rad = kPi / (180.0 * 3600.0);
inline constexpr double arcmin_rad = kPi / (180.0 * 60.0);
inline constexpr double deg_rad = kPi / 180.0;
inline constexpr double arcmin2_sr = arcmin_rad * arcmin_rad;  // 8.4616e-8 sr

// Hubble constant 100 km/s/Mpc in s^-1.
inline constexpr double H100_s = 100.0 / (Mpc_cm / 1e5);

}  // namespace icmscope::core::constants
