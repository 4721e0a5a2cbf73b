// Package quantize trains scalar codebooks: short, sorted lists of float32
// levels that stand in for many float64 values, such as the log10
// probabilities and log10 back-off weights of a language model that a device
// stores with a few bits each.
//
// Train builds a codebook with one of two trainers, chosen by name:
//
//   - EqualMass ("equal-mass") sorts the values, cuts them into bins that hold
//     the same number of values and takes the mean of each bin. It is fast
//     and simple, and it is not optimal.
//   - LeastSquares ("least-squares") finds the codebook with the least total squared
//     error by dynamic programming over the sorted distinct values, after
//     H. Wang and M. Song (2011), "Ckmeans.1d.dp: Optimal k-means clustering
//     in one dimension by dynamic programming", The R Journal 3(2). See
//     LeastSquares for its cost and for the one case in which it first merges
//     values into micro-bins.
//
// A Codebook maps a value to the index of its nearest level (Index) and an
// index back to its level (Value), checks itself (Validate), and summarises
// itself for reports (Min, Max, LargestGap, MaxAbsError). MeanSquaredError
// measures a codebook on a set of values, and Lloyd refines a codebook by the
// iterations of S. P. Lloyd (1982), "Least squares quantization in PCM", IEEE
// Transactions on Information Theory 28(2).
//
// Everything is deterministic: the same input gives the same codebook.
package quantize
