package assoc

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"github.com/crossform/crossform/dataset"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// Options tunes AllPairs. The zero value analyses every analysable non-key
// column with the defaults.
type Options struct {
	// Vars restricts the analysis to the named variables (kept in table
	// order); nil means every column. An unknown or repeated name is an error.
	Vars []string
	// Workers is the number of goroutines (default runtime.GOMAXPROCS(0)).
	// The result does not depend on it.
	Workers int
	// MinPairs is the fewest complete pairs a pair needs to be estimated
	// (default 20); fewer gives SkipFewPairs.
	MinPairs int
	// ManyLevels: an ordinal variable with more distinct values than this is
	// treated as numeric, i.e. ranked for Spearman's ρ (default 10, the
	// dataset package's default OrdinalMaxLevels, so an inferred integer
	// scale stays ordinal).
	ManyLevels int
	// KeepExcluded keeps identifier, free-text and key columns in the matrix,
	// every pair with them skipped with SkipNotAnalysable or SkipKey, instead
	// of only listing them in Matrix.Excluded.
	KeepExcluded bool
	// Progress, when not nil, is called with the number of pairs done and
	// the total, from the goroutine that called AllPairs, at most every few
	// hundred pairs and once at the end.
	Progress func(done, total int)
}

// ErrTooManyRows is returned for tables with more than MaxRows rows.
var ErrTooManyRows = errors.New("too many rows for exact rank sums")

// col is a variable prepared for the pair kernels: ranked once, coded once.
type col struct {
	kind     Kind
	excl     Skip // SkipNotAnalysable or SkipKey when kept although excluded
	constant bool
	miss     []uint64 // analysis-missing rows (partial dates count as missing)
	raw      []uint64 // missing rows as read, for the missingness φ
	nPresent int
	nRaw     int
	distinct int

	// Ranked variables (numeric, ordinal).
	ord   []int32 // present rows in ascending order of value
	tg    []int32 // tie groups of two or more equal values: start, end positions in ord
	rank2 []int32 // doubled mid-rank among present rows, by row; 0 where missing
	ties  int64   // Σ(t³ − t) over tie groups
	gram  int     // index in the complete-column Gram matrix, or −1

	// Coded variables (ordinal, binary, nominal).
	codes  []int32 // 0-based level in ascending order of value, −1 where missing
	levels int
	ones   []uint64 // rows with code 1 (binary variables)
}

func (c *col) ranked() bool { return c.kind == KindNumeric || c.kind == KindOrdinal }

// AllPairs computes one association per pair of variables of t, choosing the
// measure from the variables' kinds, over the rows where both are present
// (pairwise complete). Variables are those of opts.Vars, or all columns;
// identifier, free-text and key columns are excluded (Matrix.Excluded).
//
// Kinds: continuous variables and dates with a day (as days since 1970; a
// partial date counts as missing) are numeric; an ordinal variable is numeric
// when it has more than opts.ManyLevels distinct values, else ordinal; a
// binary or nominal variable is binary when it has two distinct values, else
// nominal. A variable with fewer than two distinct values is constant and all
// its pairs are skipped (SkipConstant). Measures by pair of kinds:
//
//	numeric–numeric, numeric–ordinal       Spearman's ρ
//	ordinal–ordinal, ordinal–binary,       Somers' D, both directions
//	binary–binary, numeric–binary
//	numeric–nominal, ordinal–nominal       Kruskal–Wallis ε² (nominal groups)
//	binary–nominal, nominal–nominal        Cramér's V
//
// Somers' D for a numeric–binary pair is that of the 2 × (distinct numeric
// values) table (the numeric values are the ordered categories), computed in
// O(n) by walking the numeric variable's sort order with running counts
// instead of the table; d(numeric|binary) is then the rank-biserial
// correlation (Cliff's δ, 2·AUC − 1). Kruskal–Wallis rank sums come from the
// same kind of walk; Cramér's V and Somers' D between coded variables from an
// O(n) crosstab.
//
// Each variable is ranked (sorted) once. A pair is re-ranked only on the side
// whose present rows include rows missing in the other (found by comparing
// the missing bitmaps, 64 rows a word): then one O(n) walk along that
// variable's sort order, skipping the other's missing rows by a bitmap test,
// gives mid-ranks within the pair's complete rows; runs of untied values take
// a branch-free loop, tie groups are handled whole. When neither side needs
// re-ranking ΣRxRy is a dot product of the stored ranks. Rank sums are kept
// in int64 as doubled ranks (2k + t + 1 for a tie group of t after k smaller
// values), so ρ is computed from exact integers. Pairs of numeric variables
// with no missing values take ΣRxRy from one Gram matrix of ranks (gonum's
// pure-Go BLAS dsyrk, or OpenBLAS under the openblas build tag; exact in
// float64 for up to 100,000 rows). The cost is
// O(n) per pair, never O(n²), and memory O(p² + n·p); a pair allocates
// nothing (each worker reuses its scratch buffers).
//
// Up to opts.Workers goroutines share the pairs; every pair has a fixed slot
// and is computed by the same arithmetic whatever the schedule, so the Matrix
// is bit-identical for any worker count. After all pairs, Q and MissQ are
// filled by BenjaminiHochberg over every pair with a p-value.
//
// AllPairs returns ctx.Err() if ctx is cancelled, an error wrapping
// ErrTooManyRows for tables above MaxRows rows, and an error naming any
// variable of opts.Vars that t does not have.
func AllPairs(ctx context.Context, t *dataset.Table, opts Options) (*Matrix, error) {
	if opts.MinPairs <= 0 {
		opts.MinPairs = 20
	}
	if opts.ManyLevels <= 0 {
		opts.ManyLevels = 10
	}
	if opts.Workers <= 0 {
		opts.Workers = runtime.GOMAXPROCS(0)
	}
	n := t.NRows
	if n > MaxRows {
		return nil, fmt.Errorf("table %q has %d rows, at most %d allowed: %w", t.Name, n, MaxRows, ErrTooManyRows)
	}
	sel, err := selectColumns(t, opts.Vars)
	if err != nil {
		return nil, err
	}
	m := &Matrix{Rows: n, MinPairs: opts.MinPairs, ManyLevels: opts.ManyLevels}
	var cols []*dataset.Column
	var excl []Skip
	for _, c := range sel {
		reason := NotSkipped
		switch {
		case !c.Type.Analysable():
			reason = SkipNotAnalysable
		case t.IsKey(c.Name):
			reason = SkipKey
		}
		if reason != NotSkipped {
			m.Excluded = append(m.Excluded, Excluded{Name: c.Name, Type: c.Type, Reason: reason})
			if !opts.KeepExcluded {
				continue
			}
		}
		cols = append(cols, c)
		excl = append(excl, reason)
	}
	p := len(cols)
	m.Names = make([]string, p)
	m.Labels = make([]string, p)
	m.Types = make([]dataset.Type, p)
	m.Kinds = make([]Kind, p)
	m.Domains = make([]string, p)
	m.Distinct = make([]int, p)
	m.NMissing = make([]int, p)

	// Prepare the columns in parallel: one sort per ranked column.
	prep := make([]*col, p)
	if err := parallel(ctx, opts.Workers, p, func(i int) {
		prep[i] = prepare(cols[i], excl[i], n, opts.ManyLevels)
	}); err != nil {
		return nil, err
	}
	for i, c := range cols {
		m.Names[i], m.Labels[i], m.Types[i] = c.Name, c.Label, c.Type
		m.Domains[i] = c.Prov.Domain
		if m.Domains[i] == "" {
			m.Domains[i] = t.Name
		}
		m.Kinds[i] = prep[i].kind
		m.Distinct[i] = prep[i].distinct
		m.NMissing[i] = prep[i].nRaw
	}
	gram, gp := gramOfComplete(prep, n, opts.Workers)

	total := p * (p - 1) / 2
	m.Pairs = make([]Pair, total)
	const chunk = 256
	var next atomic.Int64
	doneCh := make(chan int, opts.Workers*4)
	var wg sync.WaitGroup
	for w := 0; w < opts.Workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := newScratch(n, prep)
			for {
				if ctx.Err() != nil {
					return
				}
				lo := int(next.Add(chunk)) - chunk
				if lo >= total {
					return
				}
				hi := min(lo+chunk, total)
				i, j := pairAt(p, lo)
				for k := lo; k < hi; k++ {
					pr := &m.Pairs[k]
					*pr = newPair(i, j, cols[i].Type, cols[j].Type)
					s.pair(pr, prep[i], prep[j], gram, gp, opts.MinPairs)
					if j++; j == p {
						i++
						j = i + 1
					}
				}
				doneCh <- hi - lo
			}
		}()
	}
	go func() { wg.Wait(); close(doneCh) }()
	done := 0
	for d := range doneCh {
		done += d
		if opts.Progress != nil {
			opts.Progress(done, total)
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if opts.Progress != nil && total == 0 {
		opts.Progress(0, 0)
	}
	fillQ(m.Pairs)
	return m, nil
}

// selectColumns returns the columns named in vars (in table order), or all.
func selectColumns(t *dataset.Table, vars []string) ([]*dataset.Column, error) {
	if vars == nil {
		return t.Cols, nil
	}
	want := make(map[string]bool, len(vars))
	for _, v := range vars {
		if want[v] {
			return nil, fmt.Errorf("variable %q listed twice", v)
		}
		if t.Col(v) == nil {
			return nil, fmt.Errorf("table %q has no variable %q", t.Name, v)
		}
		want[v] = true
	}
	var out []*dataset.Column
	for _, c := range t.Cols {
		if want[c.Name] {
			out = append(out, c)
		}
	}
	return out, nil
}

// pairAt returns the pair (i, j) at slot k of the upper triangle of p variables.
func pairAt(p, k int) (int, int) {
	i := 0
	for k >= p-1-i {
		k -= p - 1 - i
		i++
	}
	return i, i + 1 + k
}

// parallel runs f(0..n-1) on up to w goroutines; it stops early on cancellation.
func parallel(ctx context.Context, w, n int, f func(i int)) error {
	var next atomic.Int64
	var wg sync.WaitGroup
	for range min(w, max(n, 1)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for ctx.Err() == nil {
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				f(i)
			}
		}()
	}
	wg.Wait()
	return ctx.Err()
}

// prepare ranks and codes one column.
func prepare(c *dataset.Column, excl Skip, n, manyLevels int) *col {
	nw := (n + 63) / 64
	pc := &col{excl: excl, gram: -1, miss: make([]uint64, nw), raw: make([]uint64, nw)}
	rw := c.MissingBits().Words()
	copy(pc.raw, rw)
	if n%64 != 0 && nw > 0 {
		pc.raw[nw-1] &= 1<<(uint(n)%64) - 1
	}
	pc.nRaw = popcount(pc.raw)
	if excl != NotSkipped {
		return pc
	}
	// Sort (value, row) pairs of the present rows: the order within a tie
	// group does not matter, as every use sums over whole groups.
	type vr struct {
		v float64
		r int32
	}
	sorted := make([]vr, 0, n)
	for i := 0; i < n; i++ {
		v := c.Float(i)
		if math.IsNaN(v) {
			pc.miss[i>>6] |= 1 << (uint(i) & 63)
			continue
		}
		sorted = append(sorted, vr{v, int32(i)})
	}
	pc.nPresent = len(sorted)
	slices.SortFunc(sorted, func(a, b vr) int { return cmp.Compare(a.v, b.v) })
	ord := make([]int32, len(sorted))
	var starts []int32
	for k, e := range sorted {
		ord[k] = e.r
		if k == 0 || e.v != sorted[k-1].v {
			starts = append(starts, int32(k))
		}
	}
	pc.distinct = len(starts)
	switch c.Type {
	case dataset.Continuous, dataset.DateTime:
		pc.kind = KindNumeric
	case dataset.Ordinal:
		pc.kind = KindOrdinal
		if pc.distinct > manyLevels {
			pc.kind = KindNumeric
		}
	case dataset.Binary, dataset.Nominal:
		pc.kind = KindNominal
		if pc.distinct <= 2 {
			pc.kind = KindBinary
		}
	}
	pc.constant = pc.distinct < 2
	if pc.ranked() {
		pc.ord = ord
		pc.rank2 = make([]int32, n)
		starts = append(starts, int32(len(ord)))
		for g := 0; g+1 < len(starts); g++ {
			a, b := starts[g], starts[g+1]
			m := int64(b - a)
			v := 2*a + (b - a) + 1
			for _, r := range ord[a:b] {
				pc.rank2[r] = v
			}
			pc.ties += m*m*m - m
		}
		for g := 0; g+1 < len(starts); g++ {
			if starts[g+1]-starts[g] > 1 {
				pc.tg = append(pc.tg, starts[g], starts[g+1])
			}
		}
	}
	if pc.kind == KindOrdinal || pc.kind == KindBinary || pc.kind == KindNominal {
		pc.codes = make([]int32, n)
		for i := range pc.codes {
			pc.codes[i] = -1
		}
		for g, a := range starts[:pc.distinct] {
			b := len(ord)
			if g+1 < len(starts) {
				b = int(starts[g+1])
			}
			for _, r := range ord[a:b] {
				pc.codes[r] = int32(g)
			}
		}
		pc.levels = pc.distinct
		if pc.kind == KindBinary {
			pc.ones = make([]uint64, nw)
			for i, c := range pc.codes {
				if c == 1 {
					pc.ones[i>>6] |= 1 << (uint(i) & 63)
				}
			}
		}
	}
	return pc
}

func popcount(w []uint64) int {
	n := 0
	for _, x := range w {
		n += bits.OnesCount64(x)
	}
	return n
}

// gramOfComplete returns ΣRxRy for every pair of ranked, non-constant
// columns without missing values, as a gp×gp upper-triangular matrix
// (indexed by col.gram), or nil when fewer than two such columns exist; up
// to workers goroutines share the blocks. With
// doubled ranks ≤ 2n the sums are integers below 2⁵³ for n ≤ 100,000, so
// the floating-point result is exact whatever the summation order.
func gramOfComplete(prep []*col, n, workers int) ([]float64, int) {
	if n > 100_000 {
		return nil, 0
	}
	var idx []int
	for i, c := range prep {
		if c.ranked() && !c.constant && c.nPresent == n && c.excl == NotSkipped {
			idx = append(idx, i)
		}
	}
	gp := len(idx)
	if gp < 2 {
		return nil, 0
	}
	a := make([]float64, gp*n)
	for k, i := range idx {
		prep[i].gram = k
		row := a[k*n : (k+1)*n]
		for r, v := range prep[i].rank2 {
			row[r] = float64(v)
		}
	}
	c := make([]float64, gp*gp)
	gramSyrk(a, c, gp, n, workers)
	return c, gp
}

// gramGonum sets the upper triangle of c (gp×gp, row-major) to a·aᵀ, where a
// is gp×n row-major, with gonum's pure-Go BLAS; up to workers goroutines share
// the blocks. It is the default build's gramSyrk and, in the tests, the
// reference that the OpenBLAS build is checked against.
func gramGonum(a, c []float64, gp, n, workers int) {
	// Blocks of the upper triangle, shared among the workers: dsyrk on the
	// diagonal blocks, dgemm off the diagonal. Each element is computed once
	// whatever the schedule.
	const bs = 64
	nb := (gp + bs - 1) / bs
	type blk struct{ i, j int }
	var blocks []blk
	for i := 0; i < nb; i++ {
		for j := i; j < nb; j++ {
			blocks = append(blocks, blk{i, j})
		}
	}
	rows := func(b int) blas64.General {
		lo, hi := b*bs, min((b+1)*bs, gp)
		return blas64.General{Rows: hi - lo, Cols: n, Stride: n, Data: a[lo*n:]}
	}
	parallel(context.Background(), workers, len(blocks), func(k int) {
		b := blocks[k]
		ai, aj := rows(b.i), rows(b.j)
		off := b.i*bs*gp + b.j*bs
		if b.i == b.j {
			blas64.Syrk(blas.NoTrans, 1, ai, 0, blas64.Symmetric{Uplo: blas.Upper, N: ai.Rows, Stride: gp, Data: c[off:]})
			return
		}
		blas64.Gemm(blas.NoTrans, blas.Trans, 1, ai, aj, 0, blas64.General{Rows: ai.Rows, Cols: aj.Rows, Stride: gp, Data: c[off:]})
	})
}

// fillQ sets Q and MissQ by Benjamini–Hochberg over all pairs.
func fillQ(pairs []Pair) {
	p := make([]float64, len(pairs))
	for k := range pairs {
		p[k] = pairs[k].P
	}
	BenjaminiHochberg(p, p)
	for k := range pairs {
		pairs[k].Q = p[k]
		p[k] = pairs[k].MissP
	}
	BenjaminiHochberg(p, p)
	for k := range pairs {
		pairs[k].MissQ = p[k]
	}
}
