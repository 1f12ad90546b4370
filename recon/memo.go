package recon

import "encoding/json"

// memo keeps the results of one stage by the key of the parameters the
// stage ran with, resolved (automatic values filled in): a stage is a
// pure function of its inputs and parameters, so equal keys mean equal
// results. It holds the last limit results (at least one), so going back
// to a recent setting, as an undo does, reuses its result too.
type memo[V any] struct {
	limit int
	keys  []string
	vals  []V
}

func newMemo[V any](limit int) *memo[V] { return &memo[V]{limit: max(limit, 1)} }

// get returns the result kept for key, making it the most recent.
func (m *memo[V]) get(key string) (V, bool) {
	for i, k := range m.keys {
		if k == key {
			v := m.vals[i]
			m.keys = append(append(m.keys[:i:i], m.keys[i+1:]...), k)
			m.vals = append(append(m.vals[:i:i], m.vals[i+1:]...), v)
			return v, true
		}
	}
	var zero V
	return zero, false
}

// put keeps v for key, dropping the oldest result beyond the limit.
func (m *memo[V]) put(key string, v V) {
	if _, ok := m.get(key); ok {
		m.vals[len(m.vals)-1] = v
		return
	}
	m.keys, m.vals = append(m.keys, key), append(m.vals, v)
	if len(m.keys) > m.limit {
		m.keys, m.vals = m.keys[1:], m.vals[1:]
	}
}

// cachedStage returns the result of stage for params from m, or computes
// it with run, keeps it and counts the run in runs (for tests of the
// caching; nil counts nothing). Errors are not kept: the next call tries again.
func cachedStage[V any](m *memo[V], runs map[string]int, stage string, params any, run func() (V, error)) (V, error) {
	k := key(params)
	if v, ok := m.get(k); ok {
		return v, nil
	}
	v, err := run()
	if err != nil {
		return v, err
	}
	m.put(k, v)
	if runs != nil {
		runs[stage]++
	}
	return v, nil
}

// key is the cache key of a stage's parameters: their JSON, so only
// exported fields count.
func key(v any) string {
	b, _ := json.Marshal(v)
	return string(b)
}
