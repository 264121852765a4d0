package rvtest

import (
	"os"
	"path/filepath"
	"testing"
)

// RepoRoot walks up from the test's folder to the repository root (the
// folder holding go.mod); it fails the test when there is none.
func RepoRoot(t testing.TB) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Fatal("no go.mod above the test's folder")
		}
		dir = parent
	}
}

// RealDataDir returns ../shared/realdata beside the repository root, the
// public RV files of real stars that tests read as published, or skips the
// test when the folder is absent.
func RealDataDir(t testing.TB) string {
	t.Helper()
	rd := filepath.Join(RepoRoot(t), "..", "shared", "realdata")
	if _, err := os.Stat(rd); err != nil {
		t.Skipf("the real-data folder %s is absent: these tests need the public RV files described in its README", rd)
	}
	return rd
}
