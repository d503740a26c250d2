// Workspace: every activation and gradient buffer of a batch, allocated once.
#include <cassert>

#include "credence/net.h"

namespace credence {

template <typename S>
Workspace<S>::Workspace(const ParamLayout& layout, Index max_batch) : max_batch_(max_batch) {
  assert(max_batch >= 1);
  assert(!layout.layers.empty());
  const std::size_t num_layers = layout.chain_size();
  pre_.reserve(num_layers);
  d_pre_.reserve(num_layers);
  post_.reserve(num_layers - 1);
  for (std::size_t l = 0; l < num_layers; ++l) {
    const Index out = layout.layers[l].out;
    pre_.emplace_back(MatX<S>::Zero(out, max_batch));
    d_pre_.emplace_back(MatX<S>::Zero(out, max_batch));
    if (l + 1 < num_layers) post_.emplace_back(MatX<S>::Zero(out, max_batch));
  }
  log_probs_ = MatX<S>::Zero(layout.num_classes, max_batch);
}

template class Workspace<float>;
template class Workspace<double>;

}  // namespace credence
