#pragma once
// Physical maps of an analytic cluster model by direct line-of-sight
// integration (no particles): the noise-free reference for the particle
// projection and for tests against closed forms (Cavaliere & Fusco-Femiano
// 1976 for the beta model).
//
// The emission density matches what the particle synthesiser produces on
// average: particles of component c are drawn from rho_c and carry the total
// density rho_tot, so the band emissivity per volume is
// rho_tot * sum_c rho_c K(T_c, Z_c) (a multi-phase mixture where components
// overlap).
#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

namespace icmscope::pipeline {

struct AnalyticMapOptions {
  int subsamples = 2;  // Gauss-Legendre points per pixel axis (1 = pixel centres)
};

PhysicalMaps make_analytic_maps(const cells::ClusterModel& model, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                const AnalyticMapOptions& opt = {}, MapStats* stats = nullptr);

}  // namespace icmscope::pipeline
