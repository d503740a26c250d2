// docs/methods.md section 9 "Test values": two members, three classes, six rows.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <vector>

namespace credence::testing {

/// Member s's probabilities as (K, n): the rows of docs/methods.md's P_s become columns.
inline Eigen::MatrixXd example_member(int s) {
  Eigen::MatrixXd rows(6, 3);
  if (s == 0) {
    rows << .7, .2, .1, .1, .8, .1, .3, .3, .4, .6, .3, .1, .2, .2, .6, .5, .4, .1;
  } else {
    rows << .9, .05, .05, .3, .6, .1, .2, .5, .3, .2, .7, .1, .1, .1, .8, .3, .6, .1;
  }
  return rows.transpose();
}

/// pbar = (P1 + P2) / 2 as (K, n).
inline Eigen::MatrixXd example_mean() {
  Eigen::MatrixXd rows(6, 3);
  rows << .8, .125, .075, .2, .7, .1, .25, .4, .35, .4, .5, .1, .15, .15, .7, .4, .5, .1;
  return rows.transpose();
}

inline const std::vector<std::int32_t> kExampleLabels = {0, 1, 2, 1, 2, 0};

}  // namespace credence::testing
