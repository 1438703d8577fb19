package render

import (
	"bytes"
	"strconv"
	"strings"
	"testing"
)

func TestHeatmapColor(t *testing.T) {
	// The stops themselves, and hand-computed midpoints: between #FFF8D6 and #B0DA98 at
	// s = 0.125 each channel is the rounded mean, (255+176)/2 = 215.5 → 216 (D8),
	// (248+218)/2 = 233 (E9), (214+152)/2 = 183 (B7).
	for _, tc := range []struct {
		s    float64
		want string
	}{
		{0, "#FFF8D6"}, {0.25, "#B0DA98"}, {0.5, "#4FA98E"}, {0.75, "#256F94"}, {1, "#2E2A6B"},
		{0.125, "#D8E9B7"}, {-0.5, "#FFF8D6"}, {7, "#2E2A6B"},
	} {
		if got := HeatmapColor(tc.s); got != tc.want {
			t.Errorf("HeatmapColor(%v) = %s, want %s", tc.s, got, tc.want)
		}
	}
}

func TestHeatmapSVG(t *testing.T) {
	in, tr, part, _ := clusterStudy(t)
	var a, b bytes.Buffer
	if err := HeatmapSVG(&a, in, tr.Leaves(), part, HeatmapOptions{Title: "Invented study CF-001"}); err != nil {
		t.Fatal(err)
	}
	if err := HeatmapSVG(&b, in, tr.Leaves(), part, HeatmapOptions{Title: "Invented study CF-001"}); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Error("HeatmapSVG is not deterministic")
	}
	clusterGolden(t, "cluster_heatmap.golden", a.Bytes())
	texts := clusterSVGText(t, a.Bytes())
	joined := strings.Join(texts, "\n")
	for _, c := range part.Clusters {
		if !strings.Contains(joined, graphClusterTitle(c)) || !containsLine(texts, "C"+strconv.Itoa(c.ID)) {
			t.Errorf("heatmap lacks cluster %d", c.ID)
		}
	}
	for _, n := range in.Names {
		if !containsLine(texts, n) {
			t.Errorf("heatmap lacks label %s", n)
		}
	}
	got := a.String()
	if !strings.Contains(got, `fill="url(#hm-unknown)" d="`) {
		t.Error("heatmap draws no unknown cell, want the two unknown pairs hatched")
	}
	if n := strings.Count(got, "<g class=\"cluster\">"); n != len(part.Clusters) {
		t.Errorf("heatmap marks %d clusters, want %d", n, len(part.Clusters))
	}
}

func containsLine(lines []string, s string) bool {
	for _, l := range lines {
		if l == s {
			return true
		}
	}
	return false
}

func TestClusterHeatmapSVG(t *testing.T) {
	in, tr, part, _ := clusterStudy(t)
	c := part.Clusters[0]
	var a bytes.Buffer
	if err := ClusterHeatmapSVG(&a, in, tr.Leaves(), c, HeatmapOptions{}); err != nil {
		t.Fatal(err)
	}
	clusterGolden(t, "cluster_heatmap_c1.golden", a.Bytes())
	texts := clusterSVGText(t, a.Bytes())
	for _, m := range c.Members {
		if !containsLine(texts, m.Name) {
			t.Errorf("cluster heatmap lacks %s", m.Name)
		}
	}
	if containsLine(texts, part.Singletons[0].Name) {
		t.Errorf("cluster heatmap shows non-member %s", part.Singletons[0].Name)
	}
	// Members missing from the order still appear.
	var b bytes.Buffer
	if err := ClusterHeatmapSVG(&b, in, nil, c, HeatmapOptions{}); err != nil {
		t.Fatal(err)
	}
	if got := len(clusterSVGText(t, b.Bytes())); got != len(texts) {
		t.Errorf("without order: %d texts, want %d", got, len(texts))
	}
}

func TestHeatmapErrors(t *testing.T) {
	in, _, part, _ := clusterStudy(t)
	for _, tc := range []struct {
		order []int
		want  string
	}{
		{nil, "heatmap of no variables"},
		{[]int{0, 13}, "order[1] = 13, want an index in [0, 13)"},
		{[]int{3, 1, 3}, `order[2]: variable "ETHNIC" repeated`},
	} {
		err := HeatmapSVG(&bytes.Buffer{}, in, tc.order, part, HeatmapOptions{})
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("HeatmapSVG(order %v) error = %v, want %q", tc.order, err, tc.want)
		}
	}
}
