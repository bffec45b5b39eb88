// The bench's own small OLS, independent of weft, used only by the smoke check on a
// few hundred rows: it transforms a panel sorted by unit then period (pooled, fd,
// within) and solves the normal equations in long double, with classical, hc1 and
// cluster-by-unit (CR1) standard errors written straight from the formulas of
// CONVENTIONS.md (MacKinnon & White 1985; Liang & Zeger 1986 with the finite-sample
// factor of Cameron & Miller 2015). Its results are compared with weft's.
#pragma once

#include <string>
#include <vector>

#include "synthetic_panel.hpp"

namespace weft_bench {

struct ReferenceFit {
  std::vector<double> estimate;  // intercept first when present, then x1..xK
  std::vector<double> se;
};

// estimator: "pooled", "fd" or "within"; se: "classical", "hc1" or "cluster".
// The panel must be sorted by unit then period, have no missing values, and every
// period of the grid must be present in some row (true of make_panel's output).
ReferenceFit reference_fit(const SyntheticPanel& panel, const std::string& estimator,
                           const std::string& se);

}  // namespace weft_bench
