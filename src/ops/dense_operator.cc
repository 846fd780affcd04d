// SPDX-License-Identifier: Apache-2.0
// Dense-matrix LinearOperator.
#include "recofold/ops/dense_operator.h"

#include "recofold/core/error.h"

namespace recofold {

DenseOperator::DenseOperator(Eigen::MatrixXcf matrix)
    : DenseOperator(matrix, Shape{matrix.cols()}, Shape{matrix.rows()}) {}

DenseOperator::DenseOperator(Eigen::MatrixXcf matrix, Shape domain, Shape range)
    : m_(std::move(matrix)), domain_(std::move(domain)), range_(std::move(range)) {
  if (domain_.size() != m_.cols() || range_.size() != m_.rows())
    throw InputError("", "dense_operator.shape",
                     "matrix is " + std::to_string(m_.rows()) + "x" + std::to_string(m_.cols()) + ", shapes are " +
                         domain_.to_string() + " -> " + range_.to_string());
}

void DenseOperator::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == m_.cols()) << "dense operator input size " << x.size();
  y.noalias() = m_ * x;
}

void DenseOperator::adjoint(const VecC& y, VecC& x) const {
  RECOFOLD_CHECK(y.size() == m_.rows()) << "dense operator adjoint input size " << y.size();
  x.noalias() = m_.adjoint() * y;
}

std::string DenseOperator::name() const {
  return "dense " + std::to_string(m_.rows()) + "x" + std::to_string(m_.cols());
}

}  // namespace recofold
