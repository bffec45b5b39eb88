// Symmetric matrices judged in their scaled basis (weft/tolerances.hpp): every rank,
// singularity and clipping decision on a covariance-like matrix goes through here, so
// that no decision compares a raw-unit magnitude with a fixed tolerance.
#pragma once

#include <Eigen/Dense>

namespace weft::detail {

// M = D^-1 S D^-1 with S = D M D, D = diag(|M_jj|)^-1/2 (1 where M_jj = 0), and the
// eigen-decomposition of S (eigenvalues ascending).
struct ScaledEigen {
    Eigen::VectorXd scale;      // the diagonal of D
    Eigen::VectorXd lambda;     // eigenvalues of S, ascending
    Eigen::MatrixXd vectors;    // eigenvectors of S (columns)
    double largest = 0;         // max |lambda|

    // Number of eigenvalues with |lambda| > tolerance * largest.
    Eigen::Index rank(double tolerance) const;
    // True when the smallest eigenvalue is > tolerance * largest (and largest > 0).
    bool positive_definite(double tolerance) const;
    // x' M^- x over the eigenvalues with |lambda| > tolerance * largest (M^- the
    // generalised inverse of M taken in the scaled basis), signs kept.
    double quadratic_form(const Eigen::VectorXd& x, double tolerance) const;
    // D^-1 V max(Lambda, 0) V' D^-1 when clip, else D^-1 V Lambda V' D^-1.
    Eigen::MatrixXd rebuild(bool clip) const;
};

ScaledEigen scaled_eigen(const Eigen::MatrixXd& m);

// The same with D = diag(|reference_j|)^-1/2 from another matrix's diagonal in the same
// units, for a matrix whose own diagonal can cancel to rounding (a difference of two
// covariances): D then comes from a positive part, and a null direction stays small.
ScaledEigen scaled_eigen(const Eigen::MatrixXd& m, const Eigen::VectorXd& reference_diagonal);

}  // namespace weft::detail
