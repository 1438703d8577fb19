package cluster

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// square builds an Input from a full strength matrix, naming the variables V1, V2, ….
func square(rows [][]float64) Input {
	p := len(rows)
	in := Input{Names: make([]string, p), Strength: make([]float64, 0, p*p)}
	for i, r := range rows {
		in.Names[i] = "V" + string(rune('1'+i))
		in.Strength = append(in.Strength, r...)
	}
	return in
}

// fourVars: a–b strength 0.9, c–d 0.8, a–c 0.4, a–d 0.2, b–c 0.3, b–d 0.1 (distances 0.1,
// 0.2, 0.6, 0.8, 0.7, 0.9).
func fourVars() Input {
	return square([][]float64{
		{1, 0.9, 0.4, 0.2},
		{0.9, 1, 0.3, 0.1},
		{0.4, 0.3, 1, 0.8},
		{0.2, 0.1, 0.8, 1},
	})
}

func TestHierarchyHandDerived(t *testing.T) {
	// Hand-derived: a–b merge at 0.1 and c–d at 0.2 under every linkage; the last merge is
	// at the mean (0.6+0.8+0.7+0.9)/4 = 0.75 (average), the minimum 0.6 (single) or the
	// maximum 0.9 (complete) of the four cross distances.
	for _, tc := range []struct {
		m    Method
		want []Merge
	}{
		{Average, []Merge{{0, 1, 0.1, 2}, {2, 3, 0.2, 2}, {4, 5, 0.75, 4}}},
		{Single, []Merge{{0, 1, 0.1, 2}, {2, 3, 0.2, 2}, {4, 5, 0.6, 4}}},
		{Complete, []Merge{{0, 1, 0.1, 2}, {2, 3, 0.2, 2}, {4, 5, 0.9, 4}}},
	} {
		t.Run(tc.m.String(), func(t *testing.T) {
			tr, err := Hierarchy(fourVars(), tc.m)
			if err != nil {
				t.Fatal(err)
			}
			if len(tr.Merges) != len(tc.want) {
				t.Fatalf("got %d merges, want %d", len(tr.Merges), len(tc.want))
			}
			for k, got := range tr.Merges {
				w := tc.want[k]
				if got.A != w.A || got.B != w.B || got.Size != w.Size || math.Abs(got.Height-w.Height) > 1e-12 {
					t.Errorf("merge %d = %+v, want %+v (hand-derived)", k, got, w)
				}
			}
			if got, want := tr.Leaves(), []int{0, 1, 2, 3}; !slices.Equal(got, want) {
				t.Errorf("Leaves() = %v, want %v", got, want)
			}
		})
	}
}

func TestUnknownIsUnrelated(t *testing.T) {
	// An unknown strength must cluster exactly like strength 0 (distance 1), as documented.
	rng := rand.New(rand.NewPCG(1, 1))
	const p = 25
	known := randomInput(rng, p)
	unknown := known
	unknown.Strength = slices.Clone(known.Strength)
	for k := 0; k < 40; k++ {
		i, j := rng.IntN(p), rng.IntN(p)
		if i == j {
			continue
		}
		known.Strength[i*p+j], known.Strength[j*p+i] = 0, 0
		unknown.Strength[i*p+j], unknown.Strength[j*p+i] = math.NaN(), math.NaN()
	}
	for _, m := range []Method{Average, Single, Complete} {
		a, err := Hierarchy(known, m)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Hierarchy(unknown, m)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(a.Merges, b.Merges) {
			t.Errorf("%v: NaN strengths cluster differently from 0 strengths:\n%v\n%v", m, a.Merges, b.Merges)
		}
	}
}

func randomInput(rng *rand.Rand, p int) Input {
	in := Input{Names: make([]string, p), Strength: make([]float64, p*p)}
	for i := range p {
		in.Names[i] = "X" + strings.Repeat("0", 4-len(itoa(i))) + itoa(i)
		in.Strength[i*p+i] = 1
		for j := i + 1; j < p; j++ {
			s := rng.Float64()
			in.Strength[i*p+j], in.Strength[j*p+i] = s, s
		}
	}
	return in
}

func itoa(i int) string {
	if i == 0 {
		return "0"
	}
	var b []byte
	for ; i > 0; i /= 10 {
		b = append([]byte{byte('0' + i%10)}, b...)
	}
	return string(b)
}

func TestValidate(t *testing.T) {
	good := fourVars()
	for _, tc := range []struct {
		name string
		edit func(in *Input)
		want string // substring of the error
	}{
		{"no variables", func(in *Input) { *in = Input{} }, "no variables"},
		{"short matrix", func(in *Input) { in.Strength = in.Strength[:15] }, "strength matrix has 15 values, want 4×4 = 16"},
		{"groups", func(in *Input) { in.Groups = []string{"DM"} }, "1 groups for 4 variables"},
		{"labels", func(in *Input) { in.Labels = []string{"a", "b", "c"} }, "3 labels for 4 variables"},
		{"empty name", func(in *Input) { in.Names[2] = "" }, "variable 2 has an empty name"},
		{"repeated name", func(in *Input) { in.Names[3] = "V1" }, `variable name "V1" repeated (indexes 0 and 3)`},
		{"above 1", func(in *Input) { in.Strength[1], in.Strength[4] = 1.5, 1.5 }, `pair ("V1", "V2") [0,1]: strength 1.5 not in [0, 1]`},
		{"negative", func(in *Input) { in.Strength[2*4+3], in.Strength[3*4+2] = -0.2, -0.2 }, `pair ("V3", "V4") [2,3]: strength -0.2 not in [0, 1]`},
		{"infinite", func(in *Input) { in.Strength[3], in.Strength[12] = math.Inf(1), math.Inf(1) }, "strength +Inf not in [0, 1]"},
		{"asymmetric", func(in *Input) { in.Strength[1] = 0.5 }, `pair ("V1", "V2") [0,1]: not symmetric: 0.5 and 0.9`},
		{"half unknown", func(in *Input) { in.Strength[4] = math.NaN() }, "not symmetric: 0.9 and NaN"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := good
			in.Names = slices.Clone(good.Names)
			in.Strength = slices.Clone(good.Strength)
			tc.edit(&in)
			_, err := Hierarchy(in, Average)
			var ie *InputError
			if !errors.As(err, &ie) {
				t.Fatalf("Hierarchy error = %v, want an *InputError", err)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error = %q, want it to contain %q", err, tc.want)
			}
		})
	}
	if err := good.Validate(); err != nil {
		t.Errorf("Validate(good) = %v", err)
	}
	withNaN := fourVars()
	withNaN.Strength[1], withNaN.Strength[4] = math.NaN(), math.NaN()
	withNaN.Strength[0] = math.NaN() // diagonal is ignored
	if err := withNaN.Validate(); err != nil {
		t.Errorf("Validate(unknown pair) = %v, want nil", err)
	}
}

func TestParseMethod(t *testing.T) {
	for _, m := range []Method{Average, Single, Complete} {
		got, err := ParseMethod(m.String())
		if err != nil || got != m {
			t.Errorf("ParseMethod(%q) = %v, %v", m.String(), got, err)
		}
	}
	if _, err := ParseMethod("ward"); err == nil || !strings.Contains(err.Error(), `unknown linkage "ward"`) {
		t.Errorf("ParseMethod(ward) error = %v", err)
	}
}

func TestSmallInputs(t *testing.T) {
	one := Input{Names: []string{"AGE"}, Strength: []float64{1}}
	tr, err := Hierarchy(one, Average)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Merges) != 0 || !slices.Equal(tr.Leaves(), []int{0}) || !slices.Equal(tr.CutHeight(1), []int{0}) {
		t.Errorf("one variable: merges %v, leaves %v", tr.Merges, tr.Leaves())
	}
	if l, h, s := tr.CutAuto(0); !slices.Equal(l, []int{0}) || h != 0 || !math.IsNaN(s) {
		t.Errorf("CutAuto on one variable = %v, %v, %v", l, h, s)
	}
	two := square([][]float64{{1, 0.5}, {0.5, 1}})
	tr, err = Hierarchy(two, Complete)
	if err != nil {
		t.Fatal(err)
	}
	if got := tr.CutStrength(0.5); !slices.Equal(got, []int{0, 0}) {
		t.Errorf("CutStrength(0.5) = %v, want [0 0]", got)
	}
	if got := tr.CutStrength(0.6); !slices.Equal(got, []int{0, 1}) {
		t.Errorf("CutStrength(0.6) = %v, want [0 1]", got)
	}
}

func TestCuts(t *testing.T) {
	tr, err := Hierarchy(fourVars(), Average)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		got  []int
		want []int
	}{
		{"CutHeight(0.05)", tr.CutHeight(0.05), []int{0, 1, 2, 3}},
		{"CutHeight(0.15)", tr.CutHeight(0.15), []int{0, 0, 1, 2}},
		{"CutHeight(0.2)", tr.CutHeight(0.2), []int{0, 0, 1, 1}},
		{"CutHeight(0.75)", tr.CutHeight(0.75), []int{0, 0, 0, 0}},
		{"CutStrength(0.3)", tr.CutStrength(DefaultMinStrength), []int{0, 0, 1, 1}},
		{"CutStrength(0.2)", tr.CutStrength(0.2), []int{0, 0, 0, 0}},
		{"CutCount(0)", tr.CutCount(0), []int{0, 0, 0, 0}},
		{"CutCount(1)", tr.CutCount(1), []int{0, 0, 0, 0}},
		{"CutCount(2)", tr.CutCount(2), []int{0, 0, 1, 1}},
		{"CutCount(3)", tr.CutCount(3), []int{0, 0, 1, 2}},
		{"CutCount(9)", tr.CutCount(9), []int{0, 1, 2, 3}},
	} {
		if !slices.Equal(tc.got, tc.want) {
			t.Errorf("%s = %v, want %v (hand-derived)", tc.name, tc.got, tc.want)
		}
	}
}

func TestCutCountTies(t *testing.T) {
	// Hand-derived: four variables at pairwise distance 0.5 merge at one height, so
	// CutCount(2) cannot give two clusters and, like fcluster's maxclust, gives one.
	in := square([][]float64{
		{1, 0.5, 0.5, 0.5},
		{0.5, 1, 0.5, 0.5},
		{0.5, 0.5, 1, 0.5},
		{0.5, 0.5, 0.5, 1},
	})
	for _, m := range []Method{Average, Single, Complete} {
		tr, err := Hierarchy(in, m)
		if err != nil {
			t.Fatal(err)
		}
		for k := 1; k <= 3; k++ {
			if got := tr.CutCount(k); !slices.Equal(got, []int{0, 0, 0, 0}) {
				t.Errorf("%v: CutCount(%d) = %v, want one cluster", m, k, got)
			}
		}
		if l, h, s := tr.CutAuto(0); !slices.Equal(canon(l), []int{0, 1, 2, 3}) || h != 0 || !math.IsNaN(s) {
			t.Errorf("%v: CutAuto = %v, %v, %v, want singletons, 0, NaN (no untied cut)", m, l, h, s)
		}
	}
}

func TestSilhouetteHandDerived(t *testing.T) {
	// Hand-derived from the definition: with clusters {a,b} and {c,d} of fourVars,
	// s(a) = (0.7−0.1)/0.7, s(b) = (0.8−0.1)/0.8, s(c) = (0.65−0.2)/0.65,
	// s(d) = (0.85−0.2)/0.85, i.e. (6/7 + 7/8 + 9/13 + 13/17) / 4.
	want := (6.0/7 + 7.0/8 + 9.0/13 + 13.0/17) / 4
	in := fourVars()
	if got := Silhouette(in, []int{5, 5, 9, 9}); math.Abs(got-want) > 1e-12 {
		t.Errorf("Silhouette = %.15g, want %.15g (hand-derived)", got, want)
	}
	// {a,b},{c},{d}: s(c) = s(d) = 0 (singletons); s(a) = (min(0.6,0.8) − 0.1)/0.6,
	// s(b) = (min(0.7,0.9) − 0.1)/0.7.
	want3 := (5.0/6 + 6.0/7) / 4
	if got := Silhouette(in, []int{0, 0, 1, 2}); math.Abs(got-want3) > 1e-12 {
		t.Errorf("Silhouette 3 clusters = %.15g, want %.15g (hand-derived)", got, want3)
	}
	for _, labels := range [][]int{{0, 0, 0, 0}, {0, 1, 2, 3}} {
		if got := Silhouette(in, labels); !math.IsNaN(got) {
			t.Errorf("Silhouette(%v) = %v, want NaN", labels, got)
		}
	}
	tr, err := Hierarchy(in, Average)
	if err != nil {
		t.Fatal(err)
	}
	labels, h, s := tr.CutAuto(0)
	if !slices.Equal(labels, []int{0, 0, 1, 1}) || h != tr.Merges[1].Height || math.Abs(s-want) > 1e-12 {
		t.Errorf("CutAuto = %v, %v, %.15g; want [0 0 1 1], %v, %.15g", labels, h, s, tr.Merges[1].Height, want)
	}
}

func TestCutAutoMatchesSilhouette(t *testing.T) {
	// The incremental silhouette inside CutAuto must agree with Silhouette, and no cut with
	// at most maxK clusters may score higher.
	rng := rand.New(rand.NewPCG(7, 7))
	in := randomInput(rng, 60)
	for _, m := range []Method{Average, Single, Complete} {
		tr, err := Hierarchy(in, m)
		if err != nil {
			t.Fatal(err)
		}
		for _, maxK := range []int{0, 5} {
			labels, h, s := tr.CutAuto(maxK)
			if got := Silhouette(in, labels); math.Abs(got-s) > 1e-12 {
				t.Errorf("%v maxK=%d: CutAuto silhouette %.15g, Silhouette %.15g", m, maxK, s, got)
			}
			if !slices.Equal(labels, tr.CutHeight(h)) {
				t.Errorf("%v maxK=%d: labels differ from CutHeight(%v)", m, maxK, h)
			}
			kmax := maxK
			if kmax == 0 {
				kmax = in.Len() - 1
			}
			for k := 2; k <= kmax; k++ {
				if o := Silhouette(in, tr.CutCount(k)); o > s+1e-12 {
					t.Errorf("%v maxK=%d: CutCount(%d) silhouette %.15g beats CutAuto's %.15g", m, maxK, k, o, s)
				}
			}
		}
	}
}

func TestSummarize(t *testing.T) {
	in := Input{
		Names:  []string{"SYSBP", "AGE", "DIABP", "SEX", "WEIGHT"},
		Groups: []string{"VS", "DM", "VS", "DM", "VS"},
		Strength: []float64{
			1, 0.1, 0.8, 0.0, 0.3,
			0.1, 1, 0.2, 0.1, 0.2,
			0.8, 0.2, 1, math.NaN(), 0.6,
			0.0, 0.1, math.NaN(), 1, 0.1,
			0.3, 0.2, 0.6, 0.1, 1,
		},
	}
	part := Summarize(in, []int{7, 3, 7, 4, 7}, 2)
	if len(part.Clusters) != 1 {
		t.Fatalf("got %d clusters, want 1", len(part.Clusters))
	}
	c := part.Clusters[0]
	names := func(ms []Member) (out []string) {
		for _, m := range ms {
			out = append(out, m.Name+"/"+m.Group)
		}
		return out
	}
	if got, want := names(c.Members), []string{"DIABP/VS", "SYSBP/VS", "WEIGHT/VS"}; !slices.Equal(got, want) {
		t.Errorf("members = %v, want %v", got, want)
	}
	// Hand-derived: (0.8 + 0.3 + 0.6) / 3.
	if want := 1.7 / 3; math.Abs(c.Cohesion-want) > 1e-12 || c.Pairs != 3 || c.Unknown != 0 || c.ID != 1 {
		t.Errorf("cluster = %+v, want cohesion %v, 3 pairs, 0 unknown, ID 1", c, want)
	}
	if want := []Pair{{0, 2, 0.8}, {2, 4, 0.6}}; !slices.Equal(c.Top, want) {
		t.Errorf("Top = %v, want %v", c.Top, want)
	}
	if got, want := names(part.Singletons), []string{"AGE/DM", "SEX/DM"}; !slices.Equal(got, want) {
		t.Errorf("singletons = %v, want %v", got, want)
	}
	if want := []int{0, -1, 0, -1, 0}; !slices.Equal(part.Of, want) {
		t.Errorf("Of = %v, want %v", part.Of, want)
	}
	if want := Silhouette(in, []int{7, 3, 7, 4, 7}); part.Silhouette != want {
		t.Errorf("Silhouette = %v, want %v", part.Silhouette, want)
	}
	// A cluster with an unknown pair: cohesion over the known pair only.
	part = Summarize(in, []int{0, 0, 1, 1, 0}, 5)
	var ds *Cluster
	for i := range part.Clusters {
		if part.Clusters[i].Members[0].Name == "DIABP" {
			ds = &part.Clusters[i]
		}
	}
	if ds == nil || ds.Unknown != 1 || ds.Pairs != 1 || !math.IsNaN(ds.Cohesion) || len(ds.Top) != 0 {
		t.Errorf("DIABP–SEX cluster = %+v, want 1 unknown pair, NaN cohesion, no top pairs", ds)
	}
	// Order: the larger cluster first.
	if got := len(part.Clusters[0].Members); got != 3 {
		t.Errorf("first cluster has %d members, want 3", got)
	}
}

func TestDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	in := randomInput(rng, 80)
	a, _ := Hierarchy(in, Average)
	for range 3 {
		b, _ := Hierarchy(in, Average)
		if !slices.Equal(a.Merges, b.Merges) {
			t.Fatal("Hierarchy is not deterministic")
		}
	}
}

// canon renumbers labels by first appearance in index order, so that two labellings of the
// same partition compare equal.
func canon(labels []int) []int {
	ids := map[int]int{}
	out := make([]int, len(labels))
	for i, l := range labels {
		id, ok := ids[l]
		if !ok {
			id = len(ids)
			ids[l] = id
		}
		out[i] = id
	}
	return out
}
