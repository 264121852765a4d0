package survey

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// readmeQueries returns the ```sql blocks of the project README.
func readmeQueries(t *testing.T) []string {
	b, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	re := regexp.MustCompile("(?s)```sql\n(.*?)```")
	var out []string
	for _, m := range re.FindAllStringSubmatch(string(b), -1) {
		out = append(out, m[1])
	}
	if len(out) < 5 {
		t.Fatalf("README.md has %d SQL examples", len(out))
	}
	return out
}

// TestCatalogueSQLiteShell opens the catalogue with the sqlite3 shell
// (Debian package sqlite3, skipped when absent) and runs every example
// query of the README: each must run without error and return rows.
func TestCatalogueSQLiteShell(t *testing.T) {
	const shell = "/usr/bin/sqlite3"
	if _, err := os.Stat(shell); err != nil {
		t.Skip("sqlite3 shell not installed (Debian package sqlite3)")
	}
	stars := sample12(t)[:6]
	m := manifestOf(stars)
	m.Stars = append(m.Stars, Entry{Name: "Missing", Data: filepath.Join(t.TempDir(), "nowhere.csv")})
	out := t.TempDir()
	if _, err := Run(context.Background(), m, out, fastOpts()); !errors.Is(err, ErrPartial) {
		t.Fatalf("run: %v", err)
	}
	db := filepath.Join(out, CatalogueFile)
	run := func(sql string) string {
		cmd := exec.Command(shell, "-bail", "-batch", "-header", db)
		cmd.Stdin = strings.NewReader(sql)
		b, err := cmd.CombinedOutput()
		if err != nil || strings.Contains(string(b), "Error") {
			t.Fatalf("sqlite3 on\n%s\n: %v\n%s", sql, err, b)
		}
		return string(b)
	}
	if s := run(".schema"); !strings.Contains(s, "CREATE TABLE evidence") {
		t.Errorf(".schema: %s", s)
	}
	if s := run("PRAGMA user_version;"); strings.TrimSpace(s) != fmt.Sprintf("user_version\n%d", SchemaVersion) {
		t.Errorf("user_version: %q", s)
	}
	if s := run("PRAGMA integrity_check;"); strings.TrimSpace(s) != "integrity_check\nok" {
		t.Errorf("integrity_check: %q", s)
	}
	for _, q := range readmeQueries(t) {
		res := run(q)
		// Every SELECT prints a header line and at least one row.
		nsel := strings.Count(strings.ToUpper(q), "SELECT ")
		if lines := strings.Count(strings.TrimSpace(res), "\n") + 1; lines < 2*nsel {
			t.Errorf("query\n%s\nreturned too little:\n%s", q, res)
		}
	}
	// A query's answer checked against the run: the failed star's reason.
	if res := run("SELECT error FROM stars WHERE status = 'failed';"); !strings.Contains(res, "nowhere.csv") {
		t.Errorf("failed star's reason: %s", res)
	}
}
