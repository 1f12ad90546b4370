package main

import (
	"context"
	"errors"
	"os"
	"os/signal"
	"syscall"

	"spotloom/capture"
)

// interruptSignals stop a command cleanly: Ctrl-C, a kill, a closed
// terminal.
var interruptSignals = []os.Signal{os.Interrupt, syscall.SIGTERM, syscall.SIGHUP}

// errInterrupted is what a command stopped by a signal says.
var errInterrupted = errors.New("interrupted")

// interruptContext is cancelled by any of interruptSignals; call stop
// when the command ends.
func interruptContext() (ctx context.Context, stop context.CancelFunc) {
	return signal.NotifyContext(context.Background(), interruptSignals...)
}

// interrupted turns the error of work stopped by ctx into errInterrupted.
func interrupted(ctx context.Context, err error) error {
	if err != nil && ctx.Err() != nil && errors.Is(err, context.Canceled) {
		return errInterrupted
	}
	return err
}

// openCapture is capture.Open stopped by ctx: the reader does not take a
// context, so an interrupted command returns at once and leaves the read
// to end with the process.
func openCapture(ctx context.Context, path string, opts capture.Options) (*capture.Recording, error) {
	type opened struct {
		rec *capture.Recording
		err error
	}
	done := make(chan opened, 1)
	go func() {
		rec, err := capture.Open(path, opts)
		done <- opened{rec, err}
	}()
	select {
	case o := <-done:
		return o.rec, o.err
	case <-ctx.Done():
		return nil, errInterrupted
	}
}
