package render

import (
	"bytes"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/cluster"
)

func TestDendrogramSVG(t *testing.T) {
	in, tr, part, _ := clusterStudy(t)
	opts := DendrogramOptions{Title: "Invented study CF-001", ShowCut: true, Cut: 1 - cluster.DefaultMinStrength}
	var a, b bytes.Buffer
	if err := DendrogramSVG(&a, in, tr, part, opts); err != nil {
		t.Fatal(err)
	}
	if err := DendrogramSVG(&b, in, tr, part, opts); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Error("DendrogramSVG is not deterministic")
	}
	clusterGolden(t, "cluster_dendrogram.golden", a.Bytes())
	texts := clusterSVGText(t, a.Bytes())
	for _, c := range part.Clusters {
		if !containsLine(texts, "C"+strconv.Itoa(c.ID)) || !containsLine(texts, graphClusterTitle(c)) {
			t.Errorf("dendrogram lacks cluster %d", c.ID)
		}
	}
	// Leaf names in tree order, top to bottom.
	var names []string
	for _, s := range texts {
		for _, n := range in.Names {
			if s == n {
				names = append(names, s)
			}
		}
	}
	var want []string
	for _, l := range tr.Leaves() {
		want = append(want, in.Names[l])
	}
	if strings.Join(names, ",") != strings.Join(want, ",") {
		t.Errorf("leaf names %v, want %v", names, want)
	}
	if !strings.Contains(a.String(), `class="cut"`) {
		t.Error("no cut line")
	}
	if err := DendrogramSVG(&b, cluster.Input{Names: []string{"A"}}, tr, nil, opts); err == nil {
		t.Error("tree and input of different sizes: no error")
	}
}
