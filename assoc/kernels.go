package assoc

import (
	"math"
	"math/bits"
)

// scratch holds one worker's buffers, reused across pairs.
type scratch struct {
	nw      int
	rx      []int32   // doubled ranks by row for the current pair
	tab     []float64 // contingency table
	cum     []float64 // cumulative sums for Somers' D
	rs, cs  []float64
	r2, cnt []int64 // Kruskal–Wallis sums, indexed by code+1
	ctab    []int32 // code table with a missing row and column
}

func newScratch(n int, prep []*col) *scratch {
	maxL := 2
	for _, c := range prep {
		maxL = max(maxL, c.levels)
	}
	return &scratch{
		nw:  (n + 63) / 64,
		rx:  make([]int32, n),
		r2:  make([]int64, maxL+1),
		cnt: make([]int64, maxL+1),
	}
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// bit returns 1 when row r is set in w.
func bit(w []uint64, r int32) int32 { return int32(w[r>>6] >> (uint32(r) & 63) & 1) }

// pair computes the association of x = prep[I] and y = prep[J] into pr.
func (s *scratch) pair(pr *Pair, x, y *col, gram []float64, gp, minPairs int) {
	// Missingness association, whatever the measure.
	if x.excl == NotSkipped && y.excl == NotSkipped && x.nRaw > 0 && y.nRaw > 0 {
		var both int
		for k, w := range x.raw {
			both += popcnt(w & y.raw[k])
		}
		n := float64(len(s.rx))
		a, cx, cy := float64(both), float64(x.nRaw), float64(y.nRaw)
		r := phi(n-cx-cy+a, cy-a, cx-a, a)
		pr.MissPhi, pr.MissP = r.Phi, r.P
	}
	switch {
	case x.excl != NotSkipped:
		pr.Skip = x.excl
		return
	case y.excl != NotSkipped:
		pr.Skip = y.excl
		return
	}
	kx, ky := x.kind, y.kind
	switch {
	case x.ranked() && y.ranked() && (kx == KindNumeric || ky == KindNumeric):
		pr.Measure = MeasureSpearman
	case kx == KindNominal && ky == KindNominal, kx == KindNominal && ky == KindBinary, kx == KindBinary && ky == KindNominal:
		pr.Measure = MeasureCramersV
	case kx == KindNominal || ky == KindNominal:
		pr.Measure = MeasureKruskal
	default:
		pr.Measure = MeasureSomersD
	}
	// Complete pairs from the bitmaps.
	var nm int
	needX, needY := false, false
	for k, wx := range x.miss {
		wy := y.miss[k]
		nm += popcnt(wx | wy)
		needX = needX || wy&^wx != 0
		needY = needY || wx&^wy != 0
	}
	nc := len(s.rx) - nm
	pr.N = int32(nc)
	switch {
	case x.constant || y.constant:
		pr.Skip = SkipConstant
		return
	case nc < minPairs:
		pr.Skip = SkipFewPairs
		return
	}
	switch pr.Measure {
	case MeasureSpearman:
		s.spearman(pr, x, y, needX, needY, gram, gp)
	case MeasureKruskal:
		if x.kind == KindNominal {
			x, y = y, x
		}
		res := kruskalWalk(x, y.codes, s.r2[:y.levels+1], s.cnt[:y.levels+1])
		if math.IsNaN(res.H) {
			pr.Skip = SkipConstant
			return
		}
		pr.Estimate, pr.Stat, pr.DF, pr.P = res.EpsilonSq, res.H, float64(res.DF), res.P
		pr.Strength = math.Sqrt(res.EpsilonSq)
	case MeasureCramersV:
		t, r, c := s.codeTable(x, y)
		s.rs, s.cs = grow(s.rs, r), grow(s.cs, c)
		res := cramersV(t, r, c, s.rs, s.cs)
		if math.IsNaN(res.V) {
			pr.Skip = SkipConstant
			return
		}
		pr.Estimate, pr.Estimate2, pr.Stat, pr.DF, pr.P = res.V, res.VBC, res.Chi2, float64(res.DF), res.P
		pr.Strength = res.VBC
		if math.IsNaN(pr.Strength) {
			pr.Strength = res.V
		}
	case MeasureSomersD:
		var res SomersDResult
		switch {
		case x.kind == KindNumeric:
			// Rows of the 2 × m table are y's levels: swap the directions back.
			res = somersWalk(x, y)
			res.DYX, res.DXY, res.SEYX, res.SEXY = res.DXY, res.DYX, res.SEXY, res.SEYX
		case y.kind == KindNumeric:
			res = somersWalk(y, x)
		default:
			t, r, c := s.codeTable(x, y)
			s.cum = grow(s.cum, (r+1)*(c+1))
			s.rs, s.cs = grow(s.rs, r), grow(s.cs, c)
			res = somersD(t, r, c, s.cum, s.rs, s.cs)
		}
		if math.IsNaN(res.DYX) || math.IsNaN(res.DXY) {
			pr.Skip = SkipConstant
			return
		}
		pr.Estimate, pr.Estimate2, pr.SE, pr.SE2 = res.DYX, res.DXY, res.SEYX, res.SEXY
		pr.Lo, pr.Hi = res.DYX-zCrit*res.SEYX, res.DYX+zCrit*res.SEYX
		pr.Stat, pr.P = res.Z, res.P
		pr.Strength = math.Max(math.Abs(res.DYX), math.Abs(res.DXY))
	}
}

func popcnt(w uint64) int { return bits.OnesCount64(w) }

// spearman computes ρ for two ranked columns, re-ranking a side only when its
// present rows include rows missing on the other side.
func (s *scratch) spearman(pr *Pair, x, y *col, needX, needY bool, gram []float64, gp int) {
	var sum, n, tx, ty int64
	switch {
	case !needX && !needY:
		n, tx, ty = int64(x.nPresent), x.ties, y.ties
		if x.gram >= 0 && y.gram >= 0 {
			a, b := min(x.gram, y.gram), max(x.gram, y.gram)
			sum = int64(gram[a*gp+b])
		} else {
			sum = dot32(x.rank2, y.rank2)
		}
	case needX && !needY:
		sum, n, tx = walkDot(x, y.miss, y.rank2)
		ty = y.ties
	case !needX && needY:
		sum, n, ty = walkDot(y, x.miss, x.rank2)
		tx = x.ties
	default:
		_, tx = walkRanks(x, y.miss, s.rx)
		sum, n, ty = walkDot(y, x.miss, s.rx)
	}
	res := spearmanFromSums(n, sum, tx, ty)
	if math.IsNaN(res.Rho) {
		pr.Skip = SkipConstant
		return
	}
	pr.Estimate, pr.P, pr.Lo, pr.Hi = res.Rho, res.P, res.Lo, res.Hi
	pr.Strength = math.Abs(res.Rho)
	if n > 2 {
		pr.DF = float64(n - 2)
		if math.Abs(res.Rho) < 1 {
			pr.Stat = res.Rho * math.Sqrt(pr.DF/((1-res.Rho)*(1+res.Rho)))
		} else {
			pr.Stat = math.Copysign(math.Inf(1), res.Rho)
		}
	}
}

// dot32 returns Σ a[i]·b[i] in int64.
func dot32(a, b []int32) int64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 int64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += int64(a[i]) * int64(b[i])
		s1 += int64(a[i+1]) * int64(b[i+1])
		s2 += int64(a[i+2]) * int64(b[i+2])
		s3 += int64(a[i+3]) * int64(b[i+3])
	}
	for ; i < len(a); i++ {
		s0 += int64(a[i]) * int64(b[i])
	}
	return s0 + s1 + s2 + s3
}

// codeTable counts the complete rows of two coded columns into a
// levels(x)×levels(y) table (rows x).
func (s *scratch) codeTable(x, y *col) ([]float64, int, int) {
	r, c := x.levels, y.levels
	w := c + 1
	ct := grow(s.ctab, (r+1)*w)
	s.ctab = ct
	clear(ct)
	yc := y.codes[:len(x.codes)]
	for i, a := range x.codes {
		ct[int(a+1)*w+int(yc[i]+1)]++
	}
	t := grow(s.tab, r*c)
	s.tab = t
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			t[i*c+j] = float64(ct[(i+1)*w+j+1])
		}
	}
	return t, r, c
}

// The walks below go along a ranked column's sort order x.ord. Runs of
// untied values are handled by a tight loop with no inner loop and no
// data-dependent branch; the tie groups listed in x.tg (start, end pairs
// of positions in ord) are handled as one unit each. Missing rows of the
// other variable are skipped by testing its bitmap (bit) or its code (−1).

// walkRanks writes into rx the doubled mid-rank of each of x's present rows
// among the rows not in miss (rows in miss get a value that must not be
// read), and returns how many rows were ranked and their tie sum Σ(t³ − t).
func walkRanks(x *col, miss []uint64, rx []int32) (n, ties int64) {
	var k int32
	ord, pos := x.ord, int32(0)
	for g := 0; g < len(x.tg); g += 2 {
		a, b := x.tg[g], x.tg[g+1]
		for _, r := range ord[pos:a] {
			k += 1 - bit(miss, r)
			rx[r] = 2 * k
		}
		var m int32
		for _, r := range ord[a:b] {
			m += 1 - bit(miss, r)
		}
		v := 2*k + m + 1
		for _, r := range ord[a:b] {
			rx[r] = v
		}
		k += m
		mm := int64(m)
		ties += mm*mm*mm - mm
		pos = b
	}
	for _, r := range ord[pos:] {
		k += 1 - bit(miss, r)
		rx[r] = 2 * k
	}
	return int64(k), ties
}

// walkDot walks x's sort order skipping rows in miss, ranking x within the
// remaining rows, and returns Σ rank2·other[r] over them, their count and
// x's tie sum among them. other is read at every present row of x but counts
// only at rows not in miss.
func walkDot(x *col, miss []uint64, other []int32) (sum, n, ties int64) {
	var k int64
	ord, pos := x.ord, int32(0)
	for g := 0; g < len(x.tg); g += 2 {
		a, b := x.tg[g], x.tg[g+1]
		for _, r := range ord[pos:a] {
			p := int64(1 - bit(miss, r))
			k += p
			sum += p * 2 * k * int64(other[r])
		}
		var m, sg int64
		for _, r := range ord[a:b] {
			p := int64(1 - bit(miss, r))
			m += p
			sg += p * int64(other[r])
		}
		sum += (2*k + m + 1) * sg
		k += m
		ties += m*m*m - m
		pos = b
	}
	for _, r := range ord[pos:] {
		p := int64(1 - bit(miss, r))
		k += p
		sum += p * 2 * k * int64(other[r])
	}
	return sum, k, ties
}

// kruskalWalk is the Kruskal–Wallis test of ranked column x across the
// levels of codes (−1 missing), over their complete rows; r2 and cnt (length
// levels+1, index code+1) are scratch.
func kruskalWalk(x *col, codes []int32, r2, cnt []int64) KruskalResult {
	clear(r2)
	clear(cnt)
	var k, ties int64
	ord, pos := x.ord, int32(0)
	for g := 0; g < len(x.tg); g += 2 {
		a, b := x.tg[g], x.tg[g+1]
		for _, r := range ord[pos:a] {
			c := codes[r]
			k += int64(1 + c>>31) // 1 unless c = −1 (missing)
			r2[c+1] += 2 * k
			cnt[c+1]++
		}
		var m int64
		for _, r := range ord[a:b] {
			m += int64(1 + codes[r]>>31)
		}
		v := 2*k + m + 1
		for _, r := range ord[a:b] {
			c := codes[r] + 1
			r2[c] += v
			cnt[c]++
		}
		k += m
		ties += m*m*m - m
		pos = b
	}
	for _, r := range ord[pos:] {
		c := codes[r]
		k += int64(1 + c>>31)
		r2[c+1] += 2 * k
		cnt[c+1]++
	}
	return kruskalFromSums(r2[1:], cnt[1:], ties)
}

// somersWalk is Somers' D of binary y (rows, codes 0 and 1, −1 missing) by
// numeric x (columns: the distinct values of x), computed by two walks along
// x's sort order without building the 2 × (distinct values) table. It is
// somersD of that table, with the cell counts A and D kept as running
// counts: with cu and cv the y = 0 and y = 1 counts of a column, bu and bv
// the counts before it and tu and tv the totals (from the bitmaps), a y = 0
// cell has A = tv − bv − cv and D = bv, a y = 1 cell A = bu and D = tu − bu −
// cu. Outside tie groups cu = (c = 0) and cv = (c = 1) are computed without
// branching: codes are −1, 0 or 1, so one = (c+1)>>1 is 1 only for c = 1,
// and 1 − one + c>>31 is 1 only for c = 0; a missing y gives cu = cv = 0, an
// empty column, which adds nothing.
func somersWalk(x *col, y *col) SomersDResult {
	nan := math.NaN()
	res := SomersDResult{DYX: nan, DXY: nan, SEYX: nan, SEXY: nan, Z: nan, P: nan}
	// Totals from the bitmaps: complete rows, and those with y = 1.
	var nc, n1 int
	for k, w := range x.miss {
		nc += popcnt(^(w | y.miss[k]))
		n1 += popcnt(y.ones[k] &^ w)
	}
	nc -= 64*len(x.miss) - len(y.codes) // tail bits beyond the last row
	codes := y.codes
	tu, tv := float64(nc-n1), float64(n1)
	n := tu + tv
	res.N = n
	if n == 0 {
		return res
	}
	var acc somersAcc
	acc.tu, acc.tv = tu, tv
	groupCounts := func(a, b int32) (cu, cv float64) {
		for _, r := range x.ord[a:b] {
			c := codes[r]
			one := (c + 1) >> 1
			cv += float64(one)
			cu += float64(1 - one + c>>31)
		}
		return cu, cv
	}
	// First pass: P, Q, Σ n d², Σ c_j². For a single observation cu·cv = 0,
	// which simplifies A and D.
	ord, pos := x.ord, int32(0)
	for g := 0; g <= len(x.tg); g += 2 {
		end := int32(len(ord))
		if g < len(x.tg) {
			end = x.tg[g]
		}
		p, q, s0, sc2, bu, bv := acc.p, acc.q, acc.s0, acc.sc2, acc.bu, acc.bv
		for _, r := range ord[pos:end] {
			c := codes[r]
			one := (c + 1) >> 1
			cv, cu := float64(one), float64(1-one+c>>31)
			a0, d1 := tv-bv, tu-bu // A of a y = 0 cell, D of a y = 1 cell
			p += cu*a0 + cv*bu
			q += cu*bv + cv*d1
			s0 += cu*(a0-bv)*(a0-bv) + cv*(bu-d1)*(bu-d1)
			sc2 += cu + cv
			bu += cu
			bv += cv
		}
		acc.p, acc.q, acc.s0, acc.sc2, acc.bu, acc.bv = p, q, s0, sc2, bu, bv
		if g < len(x.tg) {
			acc.first(groupCounts(x.tg[g], x.tg[g+1]))
			pos = x.tg[g+1]
		}
	}
	p, q := acc.p, acc.q
	res.Conc, res.Disc = p/2, q/2
	wr, wc, pq := n*n-tu*tu-tv*tv, n*n-acc.sc2, p-q
	acc.wr, acc.wc, acc.pq = wr, wc, pq
	acc.cr0, acc.cr1, acc.n = pq*(n-tu), pq*(n-tv), n
	acc.bu, acc.bv = 0, 0
	// Second pass: the ASE1 sums. A single observation's column total is 1.
	cc1 := pq * (n - 1)
	pos = 0
	for g := 0; g <= len(x.tg); g += 2 {
		end := int32(len(ord))
		if g < len(x.tg) {
			end = x.tg[g]
		}
		s1r, s1c, bu, bv := acc.s1r, acc.s1c, acc.bu, acc.bv
		for _, r := range ord[pos:end] {
			c := codes[r]
			one := (c + 1) >> 1
			cv, cu := float64(one), float64(1-one+c>>31)
			dd := cu*(tv-bv-bv) + cv*(bu+bu-tu)
			er := wr*dd - cu*acc.cr0 - cv*acc.cr1
			ec := wc*dd - cc1
			w := cu + cv
			s1r += w * er * er
			s1c += w * ec * ec
			bu += cu
			bv += cv
		}
		acc.s1r, acc.s1c, acc.bu, acc.bv = s1r, s1c, bu, bv
		if g < len(x.tg) {
			acc.second(groupCounts(x.tg[g], x.tg[g+1]))
			pos = x.tg[g+1]
		}
	}
	if wr > 0 {
		res.DYX = pq / wr
		res.SEYX = 2 / (wr * wr) * math.Sqrt(acc.s1r)
	}
	if wc > 0 {
		res.DXY = pq / wc
		res.SEXY = 2 / (wc * wc) * math.Sqrt(acc.s1c)
	}
	if v0 := acc.s0 - pq*pq/n; v0 > 0 {
		res.Z = pq / (2 * math.Sqrt(v0))
		res.P = math.Erfc(math.Abs(res.Z) / math.Sqrt2)
	}
	return res
}

// somersAcc accumulates somersWalk's sums column by column.
type somersAcc struct {
	tu, tv, bu, bv     float64
	p, q, s0, sc2      float64 // first pass
	n, wr, wc, pq      float64
	cr0, cr1, s1r, s1c float64 // second pass
}

// first adds a column with cu observations at y = 0 and cv at y = 1.
func (s *somersAcc) first(cu, cv float64) {
	a0, d0 := s.tv-s.bv-cv, s.bv
	a1, d1 := s.bu, s.tu-s.bu-cu
	s.p += cu*a0 + cv*a1
	s.q += cu*d0 + cv*d1
	s.s0 += cu*(a0-d0)*(a0-d0) + cv*(a1-d1)*(a1-d1)
	s.sc2 += (cu + cv) * (cu + cv)
	s.bu += cu
	s.bv += cv
}

// second adds a column's terms of the ASE1 sums.
func (s *somersAcc) second(cu, cv float64) {
	dd0 := s.tv - s.bv - cv - s.bv
	dd1 := s.bu - (s.tu - s.bu - cu)
	cc := s.pq * (s.n - cu - cv)
	er0, er1 := s.wr*dd0-s.cr0, s.wr*dd1-s.cr1
	ec0, ec1 := s.wc*dd0-cc, s.wc*dd1-cc
	s.s1r += cu*er0*er0 + cv*er1*er1
	s.s1c += cu*ec0*ec0 + cv*ec1*ec1
	s.bu += cu
	s.bv += cv
}
