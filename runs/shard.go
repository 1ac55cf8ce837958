package runs

import (
	"fmt"
	"strconv"
	"strings"
)

// Shard selects every N-th model: shard K of N (1 <= K <= N) holds the
// models with index % N == K-1. The zero Shard holds every model.
type Shard struct {
	K, N int
}

// ParseShard reads "K/N", e.g. "3/8".
func ParseShard(s string) (Shard, error) {
	a, b, ok := strings.Cut(strings.TrimSpace(s), "/")
	k, err1 := strconv.Atoi(strings.TrimSpace(a))
	n, err2 := strconv.Atoi(strings.TrimSpace(b))
	if !ok || err1 != nil || err2 != nil || n < 1 || k < 1 || k > n {
		return Shard{}, fmt.Errorf("bad shard %q: write K/N with 1 <= K <= N, e.g. 2/8 (K is 1-based, like a job-array task index)", s)
	}
	return Shard{k, n}, nil
}

// All reports whether s holds every model.
func (s Shard) All() bool { return s.N <= 1 }

// Holds reports whether the model with the given 0-based index is in s.
func (s Shard) Holds(index int) bool { return s.All() || index%s.N == s.K-1 }

func (s Shard) String() string {
	if s.All() {
		return ""
	}
	return fmt.Sprintf("%d/%d", s.K, s.N)
}
