package campaign

import (
	"os"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
)

func TestParseShard(t *testing.T) {
	for _, c := range []struct {
		in   string
		want Shard
		err  string
	}{
		{"0/4", Shard{0, 4}, ""},
		{"3/4", Shard{3, 4}, ""},
		{" 2 / 3 ", Shard{2, 3}, ""},
		{"0/1", Shard{0, 1}, ""},
		// A job array numbered 1…N gives N for the last task: refused
		// with the hint, rather than silently running nothing.
		{"4/4", Shard{}, "I counts from 0"},
		{"-1/4", Shard{}, "I counts from 0"},
		{"1/0", Shard{}, "at least 1"},
		{"1", Shard{}, "give I/N"},
		{"/4", Shard{}, "give I/N"},
		{"a/b", Shard{}, "give I/N"},
	} {
		got, err := ParseShard(c.in)
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("ParseShard(%q) = %v, %v; want an error saying %q", c.in, got, err, c.err)
			}
			continue
		}
		if err != nil || got != c.want {
			t.Errorf("ParseShard(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
}

// Round robin (the definition in the package comment): every file is in
// exactly one of the N shares, file k in share k mod N, and the shares'
// sizes differ by at most one.
func TestShardsPartitionTheBatch(t *testing.T) {
	for _, n := range []int{1, 2, 3, 4, 7} {
		const files = 23
		size := make([]int, n)
		for k := 0; k < files; k++ {
			owners := 0
			for i := 0; i < n; i++ {
				if (Shard{i, n}).Has(k) {
					owners++
					size[i]++
					if k%n != i {
						t.Errorf("N=%d: file %d in share %d, want %d", n, k, i, k%n)
					}
				}
			}
			if owners != 1 {
				t.Errorf("N=%d: file %d is in %d shares", n, k, owners)
			}
		}
		lo, hi := files, 0
		for _, s := range size {
			lo, hi = min(lo, s), max(hi, s)
		}
		if hi-lo > 1 {
			t.Errorf("N=%d: share sizes %v differ by more than one", n, size)
		}
	}
}

// Emission follows batch order whatever order the jobs finish in, and jobs
// of one output folder never overlap and keep their batch order.
func TestRunOrdersAndSerialises(t *testing.T) {
	keys := []string{"a", "b", "a", "", "c", "a", "", "b"}
	var mu sync.Mutex
	var started []int
	var inA atomic.Int32
	jobs := make([]Job, len(keys))
	for i, k := range keys {
		jobs[i] = Job{Key: k, Do: func() {
			if k == "a" && inA.Add(1) > 1 {
				t.Errorf("job %d: two jobs of folder a at once", i)
			}
			mu.Lock()
			started = append(started, i)
			mu.Unlock()
			if k == "a" {
				inA.Add(-1)
			}
		}}
	}
	for _, w := range []int{0, 1, 3, 8} {
		started = nil
		var emitted []int
		Run(jobs, w, func(i int) { emitted = append(emitted, i) })
		for i, e := range emitted {
			if e != i {
				t.Fatalf("workers %d: emitted %v, want 0…%d in order", w, emitted, len(keys)-1)
			}
		}
		if len(emitted) != len(keys) {
			t.Fatalf("workers %d: emitted %d of %d jobs", w, len(emitted), len(keys))
		}
		last := -1
		for _, i := range started {
			if keys[i] == "a" {
				if i < last {
					t.Errorf("workers %d: folder a's jobs started in order %v", w, started)
				}
				last = i
			}
		}
	}
}

// The batch is decided by how it was given (docs/campaigns.md: "a file
// writes to the same folder (`batch/NAME`) whichever share runs it"), not by
// how many files a pattern matched.
func TestGivenBatch(t *testing.T) {
	dir := t.TempDir()
	one := dir + "/one.bsr"
	if err := os.WriteFile(one, []byte("data x.csv\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		args    []string
		sharded bool
		want    bool
	}{
		{[]string{one}, false, false},                // one plain file: --out is its folder
		{[]string{one}, true, true},                  // a share of a batch
		{[]string{dir + "/o*.bsr"}, false, true},     // a pattern matching one file
		{[]string{one, one}, false, true},            // several files
		{[]string{dir + "/none*.bsr"}, false, false}, // a pattern matching none: its own error
	} {
		if got := Expand(c.args, ".bsr").Batch(c.sharded); got != c.want {
			t.Errorf("Expand(%q).Batch(%v) = %v, want %v", c.args, c.sharded, got, c.want)
		}
	}
}
