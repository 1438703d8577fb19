package render

import (
	"fmt"
	"io"
	"strconv"

	"github.com/crossform/crossform/cluster"
)

// ClustersCSV writes one row per variable: cluster number (0 for a
// singleton), variable, label, group, the cluster's size and cohesion.
func ClustersCSV(w io.Writer, in cluster.Input, part *cluster.Partition) error {
	var rows [][]string
	for _, c := range part.Clusters {
		for _, m := range c.Members {
			rows = append(rows, []string{strconv.Itoa(c.ID), m.Name, in.Label(m.Index), m.Group,
				strconv.Itoa(len(c.Members)), fixed(c.Cohesion)})
		}
	}
	for _, m := range part.Singletons {
		rows = append(rows, []string{"0", m.Name, in.Label(m.Index), m.Group, "1", ""})
	}
	return CSV(w, []string{"cluster", "variable", "label", "domain", "size", "cohesion"}, rows)
}

// ClustersJSON writes {"silhouette", "clusters": [{"id", "cohesion",
// "members": [{"name", "domain"}], "top": [{"a", "b", "strength"}]}],
// "singletons": [{"name", "domain"}]}.
func ClustersJSON(w io.Writer, in cluster.Input, part *cluster.Partition) error {
	type member struct {
		Name   string `json:"name"`
		Domain string `json:"domain"`
	}
	type edge struct {
		A        string  `json:"a"`
		B        string  `json:"b"`
		Strength float64 `json:"strength"`
	}
	type cl struct {
		ID       int      `json:"id"`
		Cohesion *float64 `json:"cohesion"`
		Members  []member `json:"members"`
		Top      []edge   `json:"top"`
	}
	out := struct {
		Silhouette *float64 `json:"silhouette"`
		Clusters   []cl     `json:"clusters"`
		Single     []member `json:"singletons"`
	}{Silhouette: ptr(part.Silhouette), Clusters: []cl{}, Single: []member{}}
	for _, c := range part.Clusters {
		x := cl{ID: c.ID, Cohesion: ptr(c.Cohesion), Members: []member{}, Top: []edge{}}
		for _, m := range c.Members {
			x.Members = append(x.Members, member{m.Name, m.Group})
		}
		for _, p := range c.Top {
			x.Top = append(x.Top, edge{in.Names[p.A], in.Names[p.B], p.Strength})
		}
		out.Clusters = append(out.Clusters, x)
	}
	for _, m := range part.Singletons {
		out.Single = append(out.Single, member{m.Name, m.Group})
	}
	return JSON(w, out)
}

// DependenciesCSV writes the cross-form dependencies in their ranked order.
func DependenciesCSV(w io.Writer, vars []cluster.VarInfo, deps []cluster.Dependency) error {
	rows := make([][]string, len(deps))
	for i, d := range deps {
		a, b := vars[d.A], vars[d.B]
		rows[i] = []string{strconv.Itoa(i + 1), a.Name, a.Domain, b.Name, b.Domain, d.Measure, fixed(d.Strength), sci(d.Q), d.Trivial}
	}
	return CSV(w, []string{"rank", "var_a", "domain_a", "var_b", "domain_b", "measure", "strength", "q", "expected_because"}, rows)
}

// ClusterSummaryText writes a short summary: the clusters with their
// members, then the top unexpected dependencies.
func ClusterSummaryText(w io.Writer, in cluster.Input, part *cluster.Partition, deps []cluster.Dependency, vars []cluster.VarInfo, cut float64) error {
	fmt.Fprintf(w, "%d variables: %d clusters, %d singletons (cut at strength %.2f)\n", in.Len(), len(part.Clusters), len(part.Singletons), cut)
	for _, c := range part.Clusters {
		names := ""
		for i, m := range c.Members {
			if i > 0 {
				names += ", "
			}
			if i == 12 {
				names += fmt.Sprintf("… (%d more)", len(c.Members)-12)
				break
			}
			names += m.Name
		}
		fmt.Fprintf(w, "  cluster %d (cohesion %.2f): %s\n", c.ID, c.Cohesion, names)
	}
	n := 0
	for _, d := range deps {
		if d.Trivial != "" {
			continue
		}
		if n == 0 {
			fmt.Fprintln(w, "unexpected cross-form dependencies (candidates for review):")
		}
		fmt.Fprintf(w, "  %s × %s: %s strength %.2f, q %s\n", vars[d.A].Name, vars[d.B].Name, d.Measure, d.Strength, sci(d.Q))
		if n++; n == 10 {
			break
		}
	}
	_, err := fmt.Fprintf(w, "%d cross-form dependencies listed (%d unexpected)\n", len(deps), countUnexpected(deps))
	return err
}

func countUnexpected(deps []cluster.Dependency) int {
	n := 0
	for _, d := range deps {
		if d.Trivial == "" {
			n++
		}
	}
	return n
}
