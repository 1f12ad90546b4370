package capture

import (
	"math"
	"math/rand/v2"
	"testing"
)

// scannerLike builds three signals from closed forms: a 10 %-duty index
// pulse train at the line rate, a slow position sine well below it, and a
// detector made of a line-periodic bumpy profile plus white noise.
func scannerLike(rateHz float64, seconds float64, seed uint64) (det, idx, pos []float32) {
	n := int(rateHz * seconds)
	rng := rand.New(rand.NewPCG(seed, 7))
	lineHz := 88.0 // lines per second of a made-up bench wheel
	det, idx, pos = make([]float32, n), make([]float32, n), make([]float32, n)
	for i := range det {
		t := float64(i) / rateHz
		phase := math.Mod(t*lineHz, 1)
		if phase < 0.1 {
			idx[i] = 4.8
		} else {
			idx[i] = 0.1
		}
		pos[i] = float32(2 + 1.5*math.Sin(2*math.Pi*0.3*t))
		det[i] = float32(0.4+0.3*math.Sin(2*math.Pi*7*phase)*math.Sin(2*math.Pi*2*t)) + float32(0.05*rng.NormFloat64())
	}
	return det, idx, pos
}

func TestGuessRoles(t *testing.T) {
	det, idx, pos := scannerLike(48000, 2, 1)
	flat := make([]float32, len(det))
	for i := range flat {
		flat[i] = 0.25
	}
	rec := &Recording{SampleRateHz: 48000, Channels: []Channel{
		{Name: "a", Samples: pos}, {Name: "b", Samples: det}, {Name: "c", Samples: flat}, {Name: "d", Samples: idx},
	}}
	got := GuessRoles(rec)
	want := []string{RolePosition, RoleDetector, RoleUnknown, RoleIndex}
	for c, g := range got {
		if g.Channel != c || g.Role != want[c] {
			t.Errorf("channel %d guessed %s (%.2f), want %s", c, g.Role, g.Confidence, want[c])
		}
		if g.Role != RoleUnknown && g.Confidence < 0.5 {
			t.Errorf("channel %d: %s with confidence %.2f, want at least 0.5 on clean signals", c, g.Role, g.Confidence)
		}
	}
}

// TestRoughnessClosedForm checks the roughness trait against its closed
// form for a pure tone: RMS of the first difference over the RMS of the
// tone is 2·sin(πf/fs).
func TestRoughnessClosedForm(t *testing.T) {
	const fs, f = 48000.0, 1000.0
	s := make([]float32, 48000)
	for i := range s {
		s[i] = float32(math.Sin(2 * math.Pi * f * float64(i) / fs))
	}
	got := measureTraits(s).roughness
	want := 2 * math.Sin(math.Pi*f/fs)
	if math.Abs(got-want) > 1e-3 {
		t.Fatalf("roughness %v, want %v", got, want)
	}
}

// TestGuessRolesTone: a position read as the amplitude of a carrier tone
// (slowly changing amplitude) is the position, not the detector.
func TestGuessRolesTone(t *testing.T) {
	det, idx, _ := scannerLike(48000, 2, 2)
	tone := make([]float32, len(det))
	for i := range tone {
		tt := float64(i) / 48000
		amp := 0.2 + 0.1*tt // the head moves: the amplitude grows
		tone[i] = float32(amp * math.Sin(2*math.Pi*1500*tt))
	}
	rec := &Recording{SampleRateHz: 48000, Channels: []Channel{{Samples: det}, {Samples: idx}, {Samples: tone}}}
	got := GuessRoles(rec)
	for c, want := range []string{RoleDetector, RoleIndex, RolePosition} {
		if got[c].Role != want {
			t.Errorf("channel %d guessed %s (%.2f), want %s", c, got[c].Role, got[c].Confidence, want)
		}
	}
}

// TestGuessRolesTwoLevelDetector: a scene of one large contrast (an edge
// card) makes the detector a two-level burst per line, which looks like a
// pulse train. It must still be the detector, not a steps channel; a real
// steps channel beside it keeps its own pace and stays steps.
func TestGuessRolesTwoLevelDetector(t *testing.T) {
	const rate, seconds, lineHz, stepHz = 48000.0, 2.0, 88.0, 613.0
	n := int(rate * seconds)
	rng := rand.New(rand.NewPCG(3, 9))
	det, idx, pos, steps := make([]float32, n), make([]float32, n), make([]float32, n), make([]float32, n)
	for i := range det {
		tm := float64(i) / rate
		phase := math.Mod(tm*lineHz, 1)
		if phase < 0.1 {
			idx[i] = 4.8
		}
		// beam in the field from 20 % to 70 % of the line, bright card on
		// the first half of the field
		if phase > 0.2 && phase < 0.45 {
			det[i] = 2.5
		}
		// photon noise on the bright part, a little electronics noise elsewhere
		det[i] += float32((0.002 + 0.02*float64(det[i])) * rng.NormFloat64())
		pos[i] = float32(1 + 0.8*tm)
		if math.Mod(tm*stepHz, 1) < 0.2 {
			steps[i] = 3.3
		}
	}
	cases := []struct {
		name  string
		chans [][]float32
		want  []string
	}{
		{"with position", [][]float32{det, idx, pos}, []string{RoleDetector, RoleIndex, RolePosition}},
		{"with steps", [][]float32{steps, det, idx}, []string{RoleSteps, RoleDetector, RoleIndex}},
	}
	for _, tc := range cases {
		rec := &Recording{SampleRateHz: rate}
		for _, s := range tc.chans {
			rec.Channels = append(rec.Channels, Channel{Samples: s})
		}
		for c, g := range GuessRoles(rec) {
			if g.Role != tc.want[c] {
				t.Errorf("%s: channel %d guessed %s (%.2f), want %s", tc.name, c, g.Role, g.Confidence, tc.want[c])
			}
		}
	}
}

// TestGuessRolesNoisySlowPosition: a head that moved only a little during a
// short capture leaves a position signal whose sensor noise is comparable
// to its swing. Block averaging must still find it slow, while a channel of
// white noise (roughness √2, the closed form for independent samples) is
// never taken for a position.
func TestGuessRolesNoisySlowPosition(t *testing.T) {
	det, idx, _ := scannerLike(48000, 2, 5)
	rng := rand.New(rand.NewPCG(11, 12))
	pos, noise := make([]float32, len(det)), make([]float32, len(det))
	for i := range pos {
		tm := float64(i) / 48000
		pos[i] = float32(-0.75+0.04*tm) + float32(0.01*rng.NormFloat64())
		noise[i] = float32(rng.NormFloat64())
	}
	rec := &Recording{SampleRateHz: 48000, Channels: []Channel{{Samples: det}, {Samples: idx}, {Samples: pos}}}
	if g := GuessRoles(rec)[2]; g.Role != RolePosition {
		t.Errorf("slow noisy position guessed %s (%.2f)", g.Role, g.Confidence)
	}
	if tr := measureTraits(noise); tr.smoothScore() > 0.05 {
		t.Errorf("white noise scores %.2f as a slow signal (roughness %.3f, block roughness %.3f)", tr.smoothScore(), tr.roughness, tr.slowRoughness)
	}
}

// TestGuessRolesOncePerRevolution: an index pulse one degree wide once per
// revolution is high for 1/360 of the time, less than the 1 % that the
// level percentiles see; it must still be found as the index.
func TestGuessRolesOncePerRevolution(t *testing.T) {
	const rate, seconds, revHz = 48000.0, 3.0, 10.0
	n := int(rate * seconds)
	rng := rand.New(rand.NewPCG(21, 22))
	det, idx := make([]float32, n), make([]float32, n)
	for i := range det {
		tm := float64(i) / rate
		turn := math.Mod(tm*revHz, 1)
		if turn < 1.0/360 {
			idx[i] = 0.8
		}
		idx[i] += float32(0.005 * rng.NormFloat64())
		if math.Mod(turn*6, 1) < 0.5 { // six apertures, beam on half of each
			det[i] = float32(0.3 + 0.2*math.Sin(2*math.Pi*3*tm) + 0.05*rng.NormFloat64())
		}
	}
	_, _, pos := scannerLike(rate, seconds, 4)
	rec := &Recording{SampleRateHz: rate, Channels: []Channel{{Samples: det}, {Samples: idx}, {Samples: pos}}}
	want := []string{RoleDetector, RoleIndex, RolePosition}
	for c, g := range GuessRoles(rec) {
		if g.Role != want[c] {
			t.Errorf("channel %d guessed %s (%.2f), want %s", c, g.Role, g.Confidence, want[c])
		}
	}
}
