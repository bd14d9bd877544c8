// imaging/sorting_network.hpp — min/max networks built at compile time, for the 5×5
// median (median5.cpp).
//
// A network is straight-line code on numbered values: the first `inputs` are the inputs,
// value inputs + i is operation i's result, the smaller (min) or larger (max) of two
// earlier values. A compare-exchange of two slots is a min and a max; a network keeps
// only the operations some output needs, so a merge asked for a few ranks costs less
// than a whole one. Values are anything with operator< (floats, or SIMD vectors lane by
// lane).
#pragma once

#include <array>
#include <utility>

namespace occulta::imaging::sorting_network {

struct Op {
  bool max;  // the larger of values a and b, else the smaller
  int a, b;
};
struct Network {
  int inputs = 0;
  int count = 0;  // operations
  std::array<Op, 160> ops{};
  int outputs = 0;
  std::array<int, 10> out{};  // the values that are the outputs, in order
};

namespace detail {

constexpr int kPad = -1;  // a slot holding +∞ (padding a run to a power of two)

// Batcher's odd–even merge (K. E. Batcher 1968, "Sorting networks and their
// applications", AFIPS SJCC 32, 307) of the sorted halves of slots [lo, lo + n) taken r apart.
constexpr void odd_even_merge(int lo, int n, int r, std::array<std::pair<int, int>, 160>& pairs, int& count) {
  const int m = 2 * r;
  if (m < n) {
    odd_even_merge(lo, n, m, pairs, count);
    odd_even_merge(lo + r, n, m, pairs, count);
    for (int i = lo + r; i + r < lo + n; i += m) pairs[count++] = {i, i + r};
  } else {
    pairs[count++] = {lo, lo + r};
  }
}

// Keeps only the operations some output needs, numbered afresh.
constexpr Network pruned(const Network& full) {
  std::array<bool, 200> live{};
  for (int k = 0; k < full.outputs; ++k) live[full.out[k]] = true;
  for (int i = full.count - 1; i >= 0; --i)
    if (live[full.inputs + i]) live[full.ops[i].a] = live[full.ops[i].b] = true;
  std::array<int, 200> renumber{};
  Network net;
  net.inputs = full.inputs;
  for (int v = 0; v < full.inputs; ++v) renumber[v] = v;
  for (int i = 0; i < full.count; ++i) {
    if (!live[full.inputs + i]) continue;
    net.ops[net.count] = {full.ops[i].max, renumber[full.ops[i].a], renumber[full.ops[i].b]};
    renumber[full.inputs + i] = net.inputs + net.count++;
  }
  net.outputs = full.outputs;
  for (int k = 0; k < full.outputs; ++k) net.out[k] = renumber[full.out[k]];
  return net;
}

// Slot i and j compare-exchanged: the smaller to i, the larger to j. A +∞ pad only moves.
constexpr void exchange(Network& net, std::array<int, 32>& slot, int i, int j) {
  if (slot[j] == kPad) return;
  if (slot[i] == kPad) {
    std::swap(slot[i], slot[j]);
    return;
  }
  net.ops[net.count++] = {false, slot[i], slot[j]};
  net.ops[net.count++] = {true, slot[i], slot[j]};
  slot[i] = net.inputs + net.count - 2;
  slot[j] = net.inputs + net.count - 1;
}

}  // namespace detail

// Sorts 5 values (outputs smallest first): 9 comparators, the fewest for 5 (Knuth, TAOCP
// vol. 3 §5.3.4; the pairs from memory, checked on all 32 0–1 inputs by the tests, which
// by the 0–1 principle of the same section proves them).
constexpr Network sort5() {
  using namespace detail;
  Network net;
  net.inputs = 5;
  std::array<int, 32> slot{0, 1, 2, 3, 4};
  constexpr std::array<std::pair<int, int>, 9> pairs{{{0, 1}, {3, 4}, {2, 4}, {2, 3}, {0, 3}, {0, 2}, {1, 4}, {1, 3}, {1, 2}}};
  for (const auto& [i, j] : pairs) exchange(net, slot, i, j);
  net.outputs = 5;
  for (int k = 0; k < 5; ++k) net.out[k] = slot[k];
  return pruned(net);
}

// Merges sorted runs of n ≤ 16 values (inputs 0 … n − 1 and n … 2n − 1, each smallest
// first) by Batcher's odd–even merge, each run padded with +∞ to a power of two (a pad
// only moves); outputs ranks [first, first + count) of the 2n, smallest first.
constexpr Network merge(int n, int first, int count) {
  using namespace detail;
  Network net;
  net.inputs = 2 * n;
  int half = 1;
  while (half < n) half *= 2;
  std::array<int, 32> slot{};
  for (int k = 0; k < half; ++k) {
    slot[k] = k < n ? k : kPad;
    slot[half + k] = k < n ? n + k : kPad;
  }
  std::array<std::pair<int, int>, 160> pairs{};
  int pair_count = 0;
  odd_even_merge(0, 2 * half, 1, pairs, pair_count);
  for (int p = 0; p < pair_count; ++p) exchange(net, slot, pairs[p].first, pairs[p].second);
  net.outputs = count;
  for (int k = 0; k < count; ++k) net.out[k] = slot[first + k];  // the pads end up last
  return pruned(net);
}

}  // namespace occulta::imaging::sorting_network
