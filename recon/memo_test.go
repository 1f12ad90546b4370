package recon

import (
	"errors"
	"testing"
)

// TestMemo: a memo returns what was put under a key, keeps the last limit
// keys (the most recently used last), and a stage that fails is not kept.
func TestMemo(t *testing.T) {
	m := newMemo[int](2)
	m.put("a", 1)
	m.put("b", 2)
	if v, ok := m.get("a"); !ok || v != 1 {
		t.Fatalf("a = %d, %v", v, ok)
	}
	m.put("c", 3) // drops b, the least recently used
	if _, ok := m.get("b"); ok {
		t.Error("b kept beyond the limit")
	}
	if v, ok := m.get("a"); !ok || v != 1 {
		t.Errorf("a dropped: %d, %v", v, ok)
	}
	runs := map[string]int{}
	calls := 0
	run := func() (int, error) { calls++; return 7, nil }
	for range 3 {
		if v, err := cachedStage(m, runs, "seven", struct{ N int }{7}, run); err != nil || v != 7 {
			t.Fatalf("cachedStage = %d, %v", v, err)
		}
	}
	if calls != 1 || runs["seven"] != 1 {
		t.Errorf("ran %d times (counted %d), want once", calls, runs["seven"])
	}
	fail := func() (int, error) { calls++; return 0, errors.New("no") }
	for range 2 {
		if _, err := cachedStage(m, runs, "fail", 1, fail); err == nil {
			t.Fatal("no error")
		}
	}
	if calls != 3 || runs["fail"] != 0 {
		t.Errorf("a failing stage: %d calls, %d counted; want 2 more calls, none counted", calls, runs["fail"])
	}
}
