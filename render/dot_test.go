package render

import (
	"bytes"
	"context"
	"encoding/xml"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/crossform/crossform/cluster"
)

// The -update flag rewrites golden files (go test ./render -update). It is registered only if
// no other test file of the package has registered it, so that files can share it.
func init() {
	if flag.Lookup("update") == nil {
		flag.Bool("update", false, "rewrite the golden files in testdata/")
	}
}

func clusterUpdate() bool {
	f := flag.Lookup("update")
	return f != nil && f.Value.String() == "true"
}

// clusterGolden compares got with testdata/name, or rewrites the file under -update.
func clusterGolden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if clusterUpdate() {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./render -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the output (%d bytes, want %d); rerun with -update and review the diff", path, len(got), len(want))
	}
}

// clusterStudy is a small invented study: 13 variables in four groups whose strengths are
// a block pattern, two unknown pairs, one variable related to none, clustered with average linkage cut at strength 0.3.
func clusterStudy(t testing.TB) (cluster.Input, *cluster.Tree, *cluster.Partition, []GraphEdge) {
	t.Helper()
	names := []string{"AGE", "SEX", "RACE", "ETHNIC", "SYSBP", "DIABP", "PULSE", "WEIGHT", "HEIGHT", "ALT", "AST", "BILI", "VISITNUM"}
	labels := []string{"Age", "Sex", "Race", "Ethnicity", "Systolic BP", "Diastolic BP", "Pulse rate", "Weight", "Height", "Alanine aminotransferase", "Aspartate aminotransferase", "", "Visit number"}
	groups := []string{"DM", "DM", "DM", "DM", "VS", "VS", "VS", "VS", "VS", "LB", "LB", "LB", "SV"}
	block := []int{0, 0, 0, 0, 1, 1, 1, 2, 2, 3, 3, 3, 4}
	p := len(names)
	in := cluster.Input{Names: names, Labels: labels, Groups: groups, Strength: make([]float64, p*p)}
	for i := range p {
		for j := range p {
			switch {
			case i == j:
				in.Strength[i*p+j] = 1
			case block[i] == block[j]:
				in.Strength[i*p+j] = 0.45 + 0.05*float64((i+j)%8)
			default:
				in.Strength[i*p+j] = 0.03 * float64((i*j)%7)
			}
		}
	}
	for _, pr := range [][2]int{{0, 11}, {2, 3}} {
		in.Strength[pr[0]*p+pr[1]], in.Strength[pr[1]*p+pr[0]] = math.NaN(), math.NaN()
	}
	tr, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		t.Fatal(err)
	}
	part := cluster.Summarize(in, tr.CutStrength(cluster.DefaultMinStrength), 3)
	var edges []GraphEdge
	for i := range p {
		for j := i + 1; j < p; j++ {
			s := in.Strength[i*p+j]
			if math.IsNaN(s) || s < 0.05 {
				continue
			}
			m := "somers_d"
			switch {
			case groups[i] == "DM" && groups[j] == "DM":
				m = "cramers_v"
			case groups[i] == groups[j]:
				m = "spearman"
			}
			edges = append(edges, GraphEdge{A: i, B: j, Strength: s, Measure: m})
		}
	}
	return in, tr, part, edges
}

// clusterSVGText parses an SVG document with encoding/xml and returns the character data of
// its <text> and <title> elements.
func clusterSVGText(t *testing.T, doc []byte) []string {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(doc))
	var out []string
	var in string
	root := ""
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG does not parse as XML: %v", err)
		}
		switch tk := tok.(type) {
		case xml.StartElement:
			if root == "" {
				root = tk.Name.Local
			}
			in = tk.Name.Local
		case xml.CharData:
			if in == "text" || in == "title" {
				out = append(out, string(tk))
			}
		case xml.EndElement:
			in = ""
		}
	}
	if root != "svg" {
		t.Fatalf("root element %q, want svg", root)
	}
	return out
}

func TestClusterGraphDOT(t *testing.T) {
	in, _, part, edges := clusterStudy(t)
	if len(part.Clusters) < 3 {
		t.Fatalf("study has %d clusters, want at least 3", len(part.Clusters))
	}
	var a bytes.Buffer
	if err := ClusterGraphDOT(&a, in, part, edges, GraphOptions{Title: "Invented study CF-001", Singletons: true}); err != nil {
		t.Fatal(err)
	}
	clusterGolden(t, "cluster_graph.golden", a.Bytes())
	got := a.String()
	for _, c := range part.Clusters {
		if !strings.Contains(got, `label="`+graphClusterTitle(c)+`"`) {
			t.Errorf("DOT lacks cluster %d's caption %q", c.ID, graphClusterTitle(c))
		}
	}
	if n := strings.Count(got, "subgraph cluster_"); n != len(part.Clusters) {
		t.Errorf("DOT has %d cluster subgraphs, want %d", n, len(part.Clusters))
	}
	for _, want := range []string{`label="ρ 0.`, `label="V 0.`, `style="dashed"`, `style="solid"`, `"AGE\nAge"`} {
		if !strings.Contains(got, want) {
			t.Errorf("DOT lacks %s", want)
		}
	}
	// Same input in another order: same bytes.
	rev := slices.Clone(edges)
	slices.Reverse(rev)
	for k := range rev {
		rev[k].A, rev[k].B = rev[k].B, rev[k].A
	}
	var b bytes.Buffer
	if err := ClusterGraphDOT(&b, in, part, rev, GraphOptions{Title: "Invented study CF-001", Singletons: true}); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Error("DOT output depends on the order of the edges")
	}
}

func TestSelectGraphEdges(t *testing.T) {
	// One cluster {0,1,2,3} and a singleton 4. Hand-derived: Kruskal takes 0–1 (0.9), 2–3
	// (0.8), skips nothing at 0.7 (1–2 joins the two trees), so the tree is 0.9, 0.8, 0.7; the
	// other edges rank 0.6 (0–2), 0.5 (1–3), 0.4 (0–3). The edge to 4 is not in a cluster.
	in := cluster.Input{Names: []string{"A", "B", "C", "D", "E"}, Strength: make([]float64, 25)}
	part := &cluster.Partition{Of: []int{0, 0, 0, 0, -1}, Clusters: []cluster.Cluster{{ID: 1}}}
	edges := []GraphEdge{
		{A: 3, B: 0, Strength: 0.4}, {A: 0, B: 1, Strength: 0.9}, {A: 2, B: 3, Strength: 0.8},
		{A: 1, B: 2, Strength: 0.7}, {A: 0, B: 2, Strength: 0.6}, {A: 1, B: 3, Strength: 0.5},
		{A: 0, B: 4, Strength: 0.95}, {A: 1, B: 0, Strength: 0.2}, // weaker duplicate of 0–1
	}
	str := func(es []GraphEdge) []float64 {
		var out []float64
		for _, e := range es {
			out = append(out, e.Strength)
		}
		return out
	}
	for _, tc := range []struct {
		opts GraphOptions
		want []float64
	}{
		{GraphOptions{Extra: -1}, []float64{0.9, 0.8, 0.7}},
		{GraphOptions{Extra: 1}, []float64{0.9, 0.8, 0.7, 0.6}},
		{GraphOptions{}, []float64{0.9, 0.8, 0.7, 0.6, 0.5, 0.4}}, // DefaultExtraEdges = 3
		{GraphOptions{Extra: 3, MaxEdges: 4}, []float64{0.9, 0.8, 0.7, 0.6}},
		{GraphOptions{Extra: 3, MaxEdges: 2}, []float64{0.9, 0.8}},
	} {
		sel, err := SelectGraphEdges(in, part, edges, tc.opts)
		if err != nil {
			t.Fatal(err)
		}
		if len(sel) != 1 || !slices.Equal(str(sel[0]), tc.want) {
			t.Errorf("SelectGraphEdges(%+v) = %v, want strengths %v (hand-derived)", tc.opts, sel, tc.want)
		}
		for _, e := range sel[0] {
			if e.A >= e.B {
				t.Errorf("edge %+v not normalised to A < B", e)
			}
		}
	}
	for _, tc := range []struct {
		e    GraphEdge
		want string
	}{
		{GraphEdge{A: 0, B: 5, Strength: 0.5}, "edge 0 joins variables 0 and 5"},
		{GraphEdge{A: 2, B: 2, Strength: 0.5}, "edge 0 joins variables 2 and 2"},
		{GraphEdge{A: 0, B: 1, Strength: 1.5}, `edge 0 ("A", "B"): strength 1.5 not in [0, 1]`},
		{GraphEdge{A: 0, B: 1, Strength: math.NaN()}, "strength NaN not in [0, 1]"},
	} {
		_, err := SelectGraphEdges(in, part, []GraphEdge{tc.e}, GraphOptions{})
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("SelectGraphEdges(%+v) error = %v, want %q", tc.e, err, tc.want)
		}
	}
}

func TestGraphEdgeLabel(t *testing.T) {
	for _, tc := range []struct {
		e          GraphEdge
		want, line string
	}{
		{GraphEdge{Strength: 0.824, Measure: "spearman"}, "ρ 0.82", "solid"},
		{GraphEdge{Strength: 0.405, Measure: "cramers_v"}, "V 0.41", "dashed"}, // 0.405 is 0.40500000000000003 in binary
		{GraphEdge{Strength: 0.55, Measure: "somers_d"}, "D 0.55", "dotted"},
		{GraphEdge{Strength: 0.3, Measure: "eta"}, "eta 0.30", "solid"},
		{GraphEdge{Strength: 0.3}, "0.30", "solid"},
		{GraphEdge{Strength: 0.3, Measure: "spearman", Label: "ρ = −0.30"}, "ρ = −0.30", "solid"},
	} {
		_, style := graphMeasureStyle(tc.e.Measure)
		if got := graphEdgeLabel(tc.e); got != tc.want || style != tc.line {
			t.Errorf("label(%+v) = %q, %s; want %q, %s", tc.e, got, style, tc.want, tc.line)
		}
	}
}

func TestClusterGraphSVG(t *testing.T) {
	in, _, part, edges := clusterStudy(t)
	var a, b bytes.Buffer
	opts := GraphOptions{Title: "Invented study CF-001", Singletons: true}
	if err := ClusterGraphSVG(&a, in, part, edges, opts); err != nil {
		t.Fatal(err)
	}
	if err := ClusterGraphSVG(&b, in, part, edges, opts); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Error("ClusterGraphSVG is not deterministic")
	}
	clusterGolden(t, "cluster_graph_svg.golden", a.Bytes())
	texts := strings.Join(clusterSVGText(t, a.Bytes()), "\n")
	for _, c := range part.Clusters {
		if !strings.Contains(texts, graphClusterTitle(c)) {
			t.Errorf("SVG lacks cluster %d's caption", c.ID)
		}
		for _, m := range c.Members {
			if !strings.Contains(texts, m.Name) {
				t.Errorf("SVG lacks variable %s", m.Name)
			}
		}
	}
	for _, m := range part.Singletons {
		if !strings.Contains(texts, m.Name) {
			t.Errorf("SVG lacks singleton %s", m.Name)
		}
	}
}

func TestClusterGraphSVGDot(t *testing.T) {
	in, _, part, edges := clusterStudy(t)
	var src bytes.Buffer
	if err := ClusterGraphDOT(&src, in, part, edges, GraphOptions{}); err != nil {
		t.Fatal(err)
	}
	if _, err := exec.LookPath("dot"); err != nil {
		t.Setenv("PATH", "")
		if err := ClusterGraphSVGDot(context.Background(), io.Discard, src.Bytes()); !errors.Is(err, ErrNoGraphviz) {
			t.Errorf("without dot: error %v, want ErrNoGraphviz", err)
		}
		t.Skip("Graphviz dot not installed")
	}
	var out bytes.Buffer
	if err := ClusterGraphSVGDot(context.Background(), &out, src.Bytes()); err != nil {
		t.Fatal(err)
	}
	texts := strings.Join(clusterSVGText(t, out.Bytes()), "\n")
	for _, c := range part.Clusters {
		if !strings.Contains(texts, graphClusterTitle(c)) {
			t.Errorf("dot's SVG lacks cluster %d's caption", c.ID)
		}
	}
	err := ClusterGraphSVGDot(context.Background(), io.Discard, []byte("graph { a -- }"))
	if err == nil || !strings.Contains(err.Error(), "running dot") {
		t.Errorf("bad DOT: error %v, want dot's failure", err)
	}
}

func TestClEscape(t *testing.T) {
	for in, want := range map[string]string{
		`a<b & "c"`: "a&lt;b &amp; &quot;c&quot;",
		"x\x00y":    "x\uFFFDy",
		"ρ 'q'":     "ρ &#39;q&#39;",
	} {
		if got := clEscape(in); got != want {
			t.Errorf("clEscape(%q) = %q, want %q", in, got, want)
		}
	}
}

// clusterBenchStudy builds p variables in p/10 blocks of strongly related variables (seeded),
// with an edge for every pair.
func clusterBenchStudy(b *testing.B, p int) (cluster.Input, *cluster.Tree, *cluster.Partition, []GraphEdge) {
	b.Helper()
	rng := rand.New(rand.NewPCG(1, uint64(p)))
	in := cluster.Input{Names: make([]string, p), Groups: make([]string, p), Strength: make([]float64, p*p)}
	for i := range p {
		in.Names[i] = fmt.Sprintf("VAR%04d", i)
		in.Groups[i] = fmt.Sprintf("D%d", i%4)
		in.Strength[i*p+i] = 1
	}
	var edges []GraphEdge
	for i := range p {
		for j := i + 1; j < p; j++ {
			s := 0.3 * rng.Float64()
			if i/10 == j/10 {
				s = 0.5 + 0.5*rng.Float64()
			}
			in.Strength[i*p+j], in.Strength[j*p+i] = s, s
			edges = append(edges, GraphEdge{A: i, B: j, Strength: s, Measure: []string{"spearman", "cramers_v", "somers_d"}[(i+j)%3]})
		}
	}
	tr, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		b.Fatal(err)
	}
	return in, tr, cluster.Summarize(in, tr.CutStrength(cluster.DefaultMinStrength), 5), edges
}

// BenchmarkClusterRender renders every cluster view for 100 variables in 10 clusters:
//
//	go test ./render -run '^$' -bench ClusterRender -benchtime 10x
func BenchmarkClusterRender(b *testing.B) {
	in, tr, part, edges := clusterBenchStudy(b, 100)
	if len(part.Clusters) != 10 {
		b.Fatalf("%d clusters, want 10", len(part.Clusters))
	}
	b.Run("dot", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := ClusterGraphDOT(io.Discard, in, part, edges, GraphOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("graph-svg", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := ClusterGraphSVG(io.Discard, in, part, edges, GraphOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("heatmap", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := HeatmapSVG(io.Discard, in, tr.Leaves(), part, HeatmapOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("dendrogram", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := DendrogramSVG(io.Discard, in, tr, part, DendrogramOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	if _, err := exec.LookPath("dot"); err == nil {
		var src bytes.Buffer
		if err := ClusterGraphDOT(&src, in, part, edges, GraphOptions{}); err != nil {
			b.Fatal(err)
		}
		b.Run("dot-binary-svg", func(b *testing.B) {
			for b.Loop() {
				if err := ClusterGraphSVGDot(context.Background(), io.Discard, src.Bytes()); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
