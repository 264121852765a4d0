package main

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

// lockedBuffer is a strings.Builder safe to read while a subprocess
// writes to it.
type lockedBuffer struct {
	mu sync.Mutex
	b  strings.Builder
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// TestVetInterrupted sends SIGINT to a vet in the middle of its diagnosis
// (a long table, the GP activity models fitted at a known rotation
// period: tens of seconds of work): it stops promptly with exit status 1
// and a message saying it was interrupted, and writes nothing. The bound
// is generous (30 s, for a loaded machine); the time taken is logged, not
// asserted.
func TestVetInterrupted(t *testing.T) {
	if testing.Short() {
		t.Skip("runs vet as a subprocess on a long table")
	}
	dir := t.TempDir()
	data := tinyStar(t, dir, "long", 4000, 17.2, 4, 11)
	star := write(t, dir, "star.toml", "name = \"Long-1\"\nrotation_period = 17.2\n")
	out := filepath.Join(dir, "report")
	cmd := spotsiftCmd(context.Background(), "vet", "--data", data, "--star", star, "--out", out)
	var stdout, stderr lockedBuffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	// The table is read (its columns are reported) and the diagnosis
	// has started.
	deadline := time.Now().Add(2 * time.Minute)
	for !strings.Contains(stderr.String(), "columns taken as") {
		select {
		case err := <-done:
			t.Fatalf("vet ended before the signal: %v\n%s", err, stderr.String())
		case <-time.After(50 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("the table was not read in 2 minutes")
		}
	}
	time.Sleep(1500 * time.Millisecond)
	t0 := time.Now()
	cmd.Process.Signal(syscall.SIGINT)
	select {
	case err := <-done:
		var ee *exec.ExitError
		if err == nil {
			t.Skipf("vet finished before the signal (%v): a faster machine than this test is sized for", time.Since(t0))
		}
		if !errors.As(err, &ee) || ee.ExitCode() != exitFailed {
			t.Errorf("exit: %v, want status %d\n%s", err, exitFailed, stderr.String())
		}
	case <-time.After(30 * time.Second):
		cmd.Process.Kill()
		t.Fatalf("still running 30 s after SIGINT\n%s", stderr.String())
	}
	t.Logf("vet stopped %v after SIGINT", time.Since(t0).Round(time.Millisecond))
	msg := stderr.String()
	if !strings.Contains(msg, "interrupted (Ctrl-C or SIGTERM): the diagnosis stopped before its end; nothing was written") {
		t.Errorf("the message does not say it was interrupted:\n%s", msg)
	}
	if strings.Contains(msg, "context canceled") || strings.Contains(stdout.String(), "verdict:") {
		t.Errorf("jargon or a verdict after the interruption:\n%s\n%s", msg, stdout.String())
	}
	if _, err := os.Stat(filepath.Join(out, "verdict.json")); !os.IsNotExist(err) {
		t.Errorf("a verdict was written after the interruption (%v)", err)
	}
}
