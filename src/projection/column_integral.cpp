#include "icmscope/projection/column_integral.hpp"

namespace icmscope::projection {

// Abramowitz & Stegun 1964, Table 25.4 (positive nodes, descending weights).
static const double kX16[8] = {0.0950125098376374, 0.2816035507792589, 0.4580167776572274, 0.6178762444026438,
                               0.7554044083550030, 0.8656312023878318, 0.9445750230732326, 0.9894009349916499};
static const double kW16[8] = {0.1894506104550685, 0.1826034150449236, 0.1691565193950025, 0.1495959888165767,
                               0.1246289712555339, 0.0951585116824928, 0.0622535239386479, 0.0271524594117541};
static const double kX8[4] = {0.1834346424956498, 0.5255324099163290, 0.7966664774136267, 0.9602898564975363};
static const double kW8[4] = {0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763};

const double* gauss_legendre_nodes(int order) { return order == 8 ? kX8 : kX16; }
const double* gauss_legendre_weights(int order) { return order == 8 ? kW8 : kW16; }

}  // namespace icmscope::projection
