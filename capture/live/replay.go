package live

import (
	"fmt"
	"sync"
	"time"

	"spotloom/capture"
)

// Replay is a Source that plays a recording at its own rate (or Speed
// times faster), in blocks of about 10 ms of samples as a sound card would
// deliver them: for tests, for demonstrations without hardware, and for
// watching a recording form again.
type Replay struct {
	rec    *capture.Recording
	name   string
	speed  float64
	block  int
	stop   chan struct{}
	done   chan struct{}
	wg     sync.WaitGroup
	once   sync.Once
	rateHz int
}

// NewReplay plays rec at speed times its real rate (1 is real time). The
// recording's rate must be a whole number of hertz, as a device's is.
func NewReplay(rec *capture.Recording, speed float64) (*Replay, error) {
	if err := rec.Validate(); err != nil {
		return nil, fmt.Errorf("replay: %v", err)
	}
	rate := int(rec.SampleRateHz)
	if float64(rate) != rec.SampleRateHz {
		return nil, fmt.Errorf("replay: sample rate %g Hz is not a whole number of hertz", rec.SampleRateHz)
	}
	if !(speed > 0) {
		return nil, fmt.Errorf("replay: speed %g: expected above 0", speed)
	}
	name := rec.Source.Path
	if name == "" {
		name = "replay"
	}
	return &Replay{rec: rec, name: "replay of " + name, speed: speed, block: max(rate/100, 1), rateHz: rate,
		stop: make(chan struct{}), done: make(chan struct{})}, nil
}

// Format is the recording's rate and channel count.
func (p *Replay) Format() Format { return Format{RateHz: p.rateHz, Channels: len(p.rec.Channels)} }

// Name says what is played.
func (p *Replay) Name() string { return p.name }

// Done is closed after the last frame is delivered.
func (p *Replay) Done() <-chan struct{} { return p.done }

// Start plays the recording on its own goroutine.
func (p *Replay) Start(deliver func(interleaved []float32)) error {
	p.wg.Add(1)
	go p.play(deliver)
	return nil
}

func (p *Replay) play(deliver func([]float32)) {
	defer p.wg.Done()
	defer close(p.done)
	nch := len(p.rec.Channels)
	buf := make([]float32, p.block*nch)
	start := time.Now()
	frames := p.rec.Frames()
	for at := 0; at < frames; at += p.block {
		n := min(p.block, frames-at)
		// A block is delivered once its last sample has "arrived".
		due := start.Add(time.Duration(float64(at+n) / float64(p.rateHz) / p.speed * float64(time.Second)))
		if wait := time.Until(due); wait > 0 {
			select {
			case <-p.stop:
				return
			case <-time.After(wait):
			}
		} else {
			select {
			case <-p.stop:
				return
			default:
			}
		}
		for i := 0; i < n; i++ {
			for c := range p.rec.Channels {
				buf[i*nch+c] = p.rec.Channels[c].Samples[at+i]
			}
		}
		deliver(buf[:n*nch])
	}
}

// Stop ends the replay and waits for its goroutine.
func (p *Replay) Stop() error {
	p.once.Do(func() { close(p.stop) })
	p.wg.Wait()
	return nil
}
