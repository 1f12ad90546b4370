package live

import (
	"fmt"
	"strings"
	"sync"
	"sync/atomic"
	"unsafe"

	"github.com/gen2brain/malgo"
)

// DeviceInfo is one capture device the sound system offers.
type DeviceInfo struct {
	Name    string // what the sound system calls it
	ID      string // the backend's own name (a PulseAudio source, an ALSA hw:N,M), when it is text
	Default bool
}

// Device is a Source reading a sound card through miniaudio (malgo): on
// Linux PulseAudio/PipeWire, then ALSA; elsewhere what miniaudio supports.
// Samples are asked for as 32-bit float, so miniaudio converts whatever the
// card delivers without clipping before the recording stores them.
type Device struct {
	ctx    *malgo.AllocatedContext
	dev    *malgo.Device
	name   string
	format Format
	done   chan struct{}
	once   sync.Once
	// deliver is set by Start; the audio callback reads it.
	deliver atomic.Pointer[func([]float32)]
}

func initContext() (*malgo.AllocatedContext, error) {
	ctx, err := malgo.InitContext(nil, malgo.ContextConfig{}, nil)
	if err != nil {
		return nil, fmt.Errorf("no sound system: %v", err)
	}
	return ctx, nil
}

// Devices lists the capture devices.
func Devices() ([]DeviceInfo, error) {
	ctx, err := initContext()
	if err != nil {
		return nil, err
	}
	defer func() { ctx.Uninit(); ctx.Free() }()
	infos, err := ctx.Devices(malgo.Capture)
	if err != nil {
		return nil, fmt.Errorf("list capture devices: %v", err)
	}
	out := make([]DeviceInfo, 0, len(infos))
	for _, in := range infos {
		out = append(out, DeviceInfo{Name: in.Name(), ID: textID(in.ID), Default: in.IsDefault != 0})
	}
	return out, nil
}

// textID is a device ID as text when the backend keeps it as a C string
// (PulseAudio, ALSA, JACK), else "".
func textID(id malgo.DeviceID) string {
	b := id[:]
	end := 0
	for end < len(b) && b[end] != 0 {
		if b[end] < 0x20 || b[end] > 0x7e {
			return ""
		}
		end++
	}
	return string(b[:end])
}

// pickDevice finds a device by its name or ID (exact, ignoring case), or by
// a part of its name that only one device has; "" is the default device.
func pickDevice(infos []malgo.DeviceInfo, want string) (*malgo.DeviceInfo, error) {
	if want == "" {
		return nil, nil
	}
	var partial []int
	for i := range infos {
		if strings.EqualFold(infos[i].Name(), want) || strings.EqualFold(textID(infos[i].ID), want) {
			return &infos[i], nil
		}
		if strings.Contains(strings.ToLower(infos[i].Name()), strings.ToLower(want)) {
			partial = append(partial, i)
		}
	}
	switch len(partial) {
	case 1:
		return &infos[partial[0]], nil
	case 0:
		return nil, fmt.Errorf("no capture device %q (\"spotloom record --list\" lists them)", want)
	}
	names := make([]string, len(partial))
	for i, p := range partial {
		names[i] = fmt.Sprintf("%q", infos[p].Name())
	}
	return nil, fmt.Errorf("%q matches %d capture devices (%s); give more of the name", want, len(partial), strings.Join(names, ", "))
}

// OpenDevice opens the capture device called name ("" for the default) at
// the rate and channel count asked (0 for the device's own).
func OpenDevice(name string, want Format) (*Device, error) {
	ctx, err := initContext()
	if err != nil {
		return nil, err
	}
	d := &Device{ctx: ctx, done: make(chan struct{})}
	fail := func(err error) (*Device, error) {
		ctx.Uninit()
		ctx.Free()
		return nil, err
	}
	infos, err := ctx.Devices(malgo.Capture)
	if err != nil {
		return fail(fmt.Errorf("list capture devices: %v", err))
	}
	info, err := pickDevice(infos, name)
	if err != nil {
		return fail(err)
	}
	cfg := malgo.DefaultDeviceConfig(malgo.Capture)
	cfg.Capture.Format = malgo.FormatF32
	cfg.Capture.Channels = uint32(want.Channels)
	cfg.SampleRate = uint32(want.RateHz)
	d.name = "default capture device"
	if info != nil {
		cfg.Capture.DeviceID = info.ID.Pointer()
		d.name = info.Name()
	}
	dev, err := malgo.InitDevice(ctx.Context, cfg, malgo.DeviceCallbacks{
		Data: d.onData,
		Stop: func() { d.once.Do(func() { close(d.done) }) },
	})
	if err != nil {
		return fail(fmt.Errorf("open %s: %v", d.name, err))
	}
	d.dev = dev
	d.format = Format{RateHz: int(dev.SampleRate()), Channels: int(dev.CaptureChannels())}
	return d, nil
}

// onData is miniaudio's capture callback: it hands the frames on as float32
// without copying or allocating (the ring buffer copies them).
func (d *Device) onData(_, input []byte, frames uint32) {
	deliver := d.deliver.Load()
	if deliver == nil || len(input) < 4 {
		return
	}
	samples := unsafe.Slice((*float32)(unsafe.Pointer(&input[0])), int(frames)*d.format.Channels)
	(*deliver)(samples)
}

// Format is the rate and channel count the device delivers.
func (d *Device) Format() Format { return d.format }

// Name is the device's name.
func (d *Device) Name() string { return d.name }

// Done is closed when the device stops, asked to or not (unplugged).
func (d *Device) Done() <-chan struct{} { return d.done }

// Start starts capture.
func (d *Device) Start(deliver func([]float32)) error {
	d.deliver.Store(&deliver)
	if err := d.dev.Start(); err != nil {
		return fmt.Errorf("start %s: %v", d.name, err)
	}
	return nil
}

// Stop stops capture and releases the device.
func (d *Device) Stop() error {
	if d.dev == nil {
		return nil
	}
	err := d.dev.Stop()
	d.deliver.Store(nil)
	d.dev.Uninit()
	d.dev = nil
	d.ctx.Uninit()
	d.ctx.Free()
	if err != nil {
		return fmt.Errorf("stop %s: %v", d.name, err)
	}
	return nil
}
