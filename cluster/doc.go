// Package cluster groups variables from a matrix of pairwise association strengths. It owns
// the hierarchy, the cuts and the per-cluster summaries; it never reads files or renders.
//
// # Distance
//
// The input is a symmetric p×p matrix of strengths in [0, 1] (|Spearman ρ|, Cramér's V,
// |Somers' D|, …). The distance between two variables is d = 1 − strength. A pair whose
// strength is unknown (NaN: too few joint observations, or skipped by the caller) is given
// distance 1, the distance of two variables with no evidence of relation. The alternative,
// leaving unknown pairs out of the average, was rejected: it makes the cluster-to-cluster
// distance depend on which pairs happen to be missing rather than on the clusters, which
// breaks the Lance–Williams update that the algorithm below relies on (the linkage stops being
// reducible), and it lets two variables that were never observed together merge at distance 0
// through a third one. Treating unknown as unrelated is conservative: missing evidence can keep
// variables apart but never pull them together. [Input.Distance] is the one place this is done.
//
// # Hierarchy
//
// [Hierarchy] builds an agglomerative hierarchy with average (UPGMA, Sokal & Michener 1958),
// single or complete linkage using the nearest-neighbour chain algorithm (Murtagh 1983,
// Comput. Stat. Q. 1:101–113; Müllner 2011, "Modern hierarchical, agglomerative clustering
// algorithms", arXiv:1109.2378). The chain grows from the lowest-indexed active
// cluster by following nearest neighbours until two clusters are each other's nearest
// neighbour; that pair is merged and the chain continues from what is left of it. The result
// equals the greedy "merge the closest pair" procedure for every reducible linkage
// (d(i, j∪k) ≥ min(d(i, j), d(i, k)) whenever d(j, k) is the smallest distance); single,
// complete and average linkage are reducible. It takes O(p²) time and O(p²) memory (two
// condensed distance matrices of p(p−1)/2 float64).
//
// Ties are broken deterministically: among equally near neighbours the chain prefers its
// previous element (which guarantees termination), then the lowest index. The merged cluster
// takes the slot of its higher-indexed part. The merges are then sorted stably by height and
// numbered as in scipy's linkage matrix: leaves are 0…p−1, the cluster formed by merge i is
// p+i, and each row holds its two children with the lower id first. With tied heights another
// implementation may merge a different one of the tied pairs first; the heights, and the
// clusters at any cut between two distinct heights, do not depend on that choice.
//
// # Cuts
//
// [Tree.CutHeight] keeps every merge whose height is ≤ h (scipy fcluster criterion
// "distance"); [Tree.CutStrength] cuts at h = 1 − s, so that the default
// [DefaultMinStrength] 0.3 groups variables whose linkage distance is at most 0.7;
// [Tree.CutCount] gives at most k clusters (criterion "maxclust"); [Tree.CutAuto] picks the
// cut that maximises the mean silhouette width (Rousseeuw 1987, J. Comput. Appl. Math.
// 20:53–65) computed on the distances above. [Summarize] turns a cut into clusters with
// members, cohesion and strongest pairs.
package cluster
