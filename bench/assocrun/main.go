// Command assocrun is the benchmark driver for bench/peers.sh: it reads a
// CSV with dataset.ReadCSVFile, runs assoc.AllPairs, and prints the load and
// analysis times in seconds (wall, and CPU for the analysis), the pair counts and the peak resident set size
// (VmHWM) on stderr. With -spearman FILE it writes every Spearman pair
// (x, y, rho, n) as CSV for bench/check_spearman.py.
//
//	go run ./bench/assocrun -workers 0 -spearman bench/out/crossform_spearman.csv bench/out/data.csv
package main

import (
	"bufio"
	"context"
	"flag"
	"fmt"
	"os"
	"runtime/pprof"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
)

func main() {
	workers := flag.Int("workers", 0, "worker goroutines (0: GOMAXPROCS)")
	spear := flag.String("spearman", "", "write Spearman pairs to this CSV")
	prof := flag.String("cpuprofile", "", "write a CPU profile of the analysis to this file")
	flag.Parse()
	if flag.NArg() != 1 {
		fmt.Fprintln(os.Stderr, "usage: assocrun [-workers N] [-spearman FILE] [-cpuprofile FILE] DATA.csv")
		os.Exit(2)
	}
	if err := run(flag.Arg(0), *workers, *spear, *prof); err != nil {
		fmt.Fprintln(os.Stderr, "assocrun:", err)
		os.Exit(2)
	}
}

func run(path string, workers int, spear, prof string) error {
	t0 := time.Now()
	tbl, err := dataset.ReadCSVFile(path, dataset.CSVOptions{})
	if err != nil {
		return err
	}
	if prof != "" {
		f, err := os.Create(prof)
		if err != nil {
			return err
		}
		defer f.Close()
		if err := pprof.StartCPUProfile(f); err != nil {
			return err
		}
	}
	t1, c1 := time.Now(), cpuSeconds()
	m, err := assoc.AllPairs(context.Background(), tbl, assoc.Options{Workers: workers})
	if err != nil {
		return err
	}
	pprof.StopCPUProfile()
	t2, c2 := time.Now(), cpuSeconds()
	counts := map[assoc.Measure]int{}
	for k := range m.Pairs {
		counts[m.Pairs[k].Measure]++
	}
	fmt.Fprintf(os.Stderr, "rows %d variables %d pairs %d (spearman %d, somers_d %d, kruskal %d, cramers_v %d)\n",
		tbl.NRows, m.Len(), len(m.Pairs), counts[assoc.MeasureSpearman], counts[assoc.MeasureSomersD],
		counts[assoc.MeasureKruskal], counts[assoc.MeasureCramersV])
	fmt.Fprintf(os.Stderr, "load_seconds %.3f\nassoc_seconds %.3f\nassoc_cpu_seconds %.3f\npeak_rss_kb %d\n",
		t1.Sub(t0).Seconds(), t2.Sub(t1).Seconds(), c2-c1, peakRSS())
	if spear == "" {
		return nil
	}
	f, err := os.Create(spear)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "x,y,rho,n")
	for k := range m.Pairs {
		pr := &m.Pairs[k]
		if pr.Measure == assoc.MeasureSpearman && pr.Skip == assoc.NotSkipped {
			fmt.Fprintf(w, "%s,%s,%s,%d\n", m.Names[pr.I], m.Names[pr.J], strconv.FormatFloat(pr.Estimate, 'g', 17, 64), pr.N)
		}
	}
	if err := w.Flush(); err != nil {
		return err
	}
	return f.Close()
}

// cpuSeconds returns the process's user plus system CPU time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	tv := func(t syscall.Timeval) float64 { return float64(t.Sec) + float64(t.Usec)/1e6 }
	return tv(ru.Utime) + tv(ru.Stime)
}

// peakRSS returns VmHWM from /proc/self/status in kB, or 0.
func peakRSS() int {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(b), "\n") {
		if rest, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			v, _ := strconv.Atoi(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(rest), "kB")))
			return v
		}
	}
	return 0
}
