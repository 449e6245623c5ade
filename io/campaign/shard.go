package campaign

import (
	"fmt"
	"strconv"
	"strings"
)

// Shard is share I of a batch split N ways (0 ≤ I < N).
type Shard struct{ I, N int }

// All is the whole batch.
var All = Shard{0, 1}

// ParseShard reads "I/N". I counts from 0, as a job array numbered
// 0…N−1 gives it (Slurm: --array=0-3 and --shard "$SLURM_ARRAY_TASK_ID/4").
func ParseShard(s string) (Shard, error) {
	i, n, ok := strings.Cut(strings.TrimSpace(s), "/")
	sh := Shard{}
	var err1, err2 error
	sh.I, err1 = strconv.Atoi(strings.TrimSpace(i))
	sh.N, err2 = strconv.Atoi(strings.TrimSpace(n))
	switch {
	case !ok || err1 != nil || err2 != nil:
		return Shard{}, fmt.Errorf("--shard %q: give I/N, share I (from 0) of N, e.g. --shard 0/4 … --shard 3/4", s)
	case sh.N < 1:
		return Shard{}, fmt.Errorf("--shard %q: the number of shares N must be at least 1", s)
	case sh.I < 0 || sh.I >= sh.N:
		return Shard{}, fmt.Errorf("--shard %q: I counts from 0 and must be below N (%d/%d … %d/%d); a job array numbered from 1 needs I−1", s, 0, sh.N, sh.N-1, sh.N)
	}
	return sh, nil
}

// Has says whether file k of the batch (from 0, in the order given) is in
// this share.
func (sh Shard) Has(k int) bool {
	if sh.N <= 1 {
		return true
	}
	return k%sh.N == sh.I
}

func (sh Shard) String() string { return fmt.Sprintf("%d/%d", sh.I, sh.N) }
