// Symmetric matrices in their scaled basis (see scaled.hpp and weft/tolerances.hpp).
#include "scaled.hpp"

#include <cmath>

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

ScaledEigen scaled_eigen(const MatrixXd& m, const VectorXd& reference_diagonal) {
    ScaledEigen out;
    const Index n = m.rows();
    out.scale.resize(n);
    for (Index j = 0; j < n; ++j) {
        const double d = std::abs(reference_diagonal[j]);
        out.scale[j] = d > 0 && std::isfinite(d) ? 1.0 / std::sqrt(d) : 1.0;
    }
    MatrixXd s = out.scale.asDiagonal() * m * out.scale.asDiagonal();
    s = 0.5 * (s + s.transpose());
    Eigen::SelfAdjointEigenSolver<MatrixXd> eig(s);
    out.lambda = eig.eigenvalues();
    out.vectors = eig.eigenvectors();
    out.largest = n > 0 ? out.lambda.cwiseAbs().maxCoeff() : 0.0;
    return out;
}

ScaledEigen scaled_eigen(const MatrixXd& m) { return scaled_eigen(m, m.diagonal()); }

Index ScaledEigen::rank(double tolerance) const {
    Index r = 0;
    for (Index j = 0; j < lambda.size(); ++j)
        if (std::abs(lambda[j]) > tolerance * largest) ++r;
    return largest > 0 ? r : 0;
}

bool ScaledEigen::positive_definite(double tolerance) const {
    return largest > 0 && lambda.size() > 0 && lambda.minCoeff() > tolerance * largest;
}

double ScaledEigen::quadratic_form(const VectorXd& x, double tolerance) const {
    // M = D^-1 S D^-1, so x' M^- x = (D x)' S^- (D x), and D S^- D is a generalised
    // inverse of M
    const VectorXd projected = vectors.transpose() * x.cwiseProduct(scale);
    double w = 0;
    for (Index j = 0; j < lambda.size(); ++j)
        if (std::abs(lambda[j]) > tolerance * largest) w += projected[j] * projected[j] / lambda[j];
    return w;
}

MatrixXd ScaledEigen::rebuild(bool clip) const {
    const VectorXd l = clip ? VectorXd(lambda.cwiseMax(0.0)) : lambda;
    const VectorXd unscale = scale.cwiseInverse();
    MatrixXd v = unscale.asDiagonal() * (vectors * l.asDiagonal() * vectors.transpose()) * unscale.asDiagonal();
    return 0.5 * (v + v.transpose());
}

}  // namespace weft::detail
