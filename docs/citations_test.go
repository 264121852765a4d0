package docs

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"spotsift/rvfit/rvtest"
)

// textFile is one repository file read for citations.
type textFile struct {
	rel  string // slash-separated path from the repository root
	body []byte
}

// repoTextFiles returns every text file of the repository: a walk that skips
// version-control folders, binary files (a NUL byte) and files over 4 MB.
func repoTextFiles(t *testing.T, root string) []textFile {
	t.Helper()
	var files []textFile
	err := filepath.WalkDir(root, func(path string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if path != root && (strings.HasPrefix(d.Name(), ".git") || d.Name() == "node_modules") {
				return filepath.SkipDir
			}
			return nil
		}
		if !d.Type().IsRegular() {
			return nil
		}
		info, err := d.Info()
		if err != nil || info.Size() > 4<<20 {
			return err
		}
		b, err := os.ReadFile(path)
		if err != nil {
			return err
		}
		if bytes.IndexByte(b, 0) >= 0 {
			return nil
		}
		rel, _ := filepath.Rel(root, path)
		files = append(files, textFile{filepath.ToSlash(rel), b})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return files
}

// forbiddenDocs are planning notes kept outside the repository: code, comments, tests
// and documents must cite docs/methods.md (or the paper) instead. The names are
// assembled so that this file does not cite them itself.
var forbiddenDocs = []string{"METHODS" + ".md", "DESIGN" + ".md", "STYLE" + ".md"}

// TestNoCitationsOfOutsideDocuments fails on any mention of a document that is not in
// the repository: the planning notes by name, and any other *.md path that no file of
// the repository matches.
func TestNoCitationsOfOutsideDocuments(t *testing.T) {
	root := rvtest.RepoRoot(t)
	files := repoTextFiles(t, root)
	have := map[string]bool{} // repository-relative paths and base names of .md files
	for _, f := range files {
		if strings.HasSuffix(f.rel, ".md") {
			have[f.rel] = true
			have[filepath.Base(f.rel)] = true
		}
	}
	mdRef := regexp.MustCompile(`[A-Za-z0-9_./-]*[A-Za-z0-9_-]\.md\b`)
	bad := 0
	for _, f := range files {
		for i, line := range strings.Split(string(f.body), "\n") {
			for _, name := range forbiddenDocs {
				if strings.Contains(line, name) {
					t.Errorf("%s:%d cites %s, which is not in the repository; cite docs/methods.md or the paper: %s",
						f.rel, i+1, name, strings.TrimSpace(line))
					bad++
				}
			}
			for _, loc := range mdRef.FindAllStringIndex(line, -1) {
				ref := line[loc[0]:loc[1]]
				if loc[0] > 0 && loc[1] < len(line) && line[loc[0]-1] == '"' && line[loc[1]] == '"' {
					continue // a file name in a string literal, not a citation
				}
				clean := strings.TrimPrefix(strings.TrimPrefix(ref, "./"), "/")
				if have[clean] || have[filepath.Base(clean)] {
					continue
				}
				if _, err := os.Stat(filepath.Join(root, filepath.Dir(f.rel), ref)); err == nil {
					continue
				}
				if isForbidden(ref) {
					continue // reported above
				}
				t.Errorf("%s:%d cites %s, which is not in the repository", f.rel, i+1, ref)
				bad++
			}
		}
	}
	if bad > 0 {
		t.Logf("%d citation(s) of documents outside the repository", bad)
	}
}

func isForbidden(ref string) bool {
	for _, name := range forbiddenDocs {
		if strings.HasSuffix(ref, name) {
			return true
		}
	}
	return false
}

// TestMethodsSectionsExist checks that every "docs/methods.md §N" (or "Appendix X")
// citation names a section that docs/methods.md has.
func TestMethodsSectionsExist(t *testing.T) {
	root := rvtest.RepoRoot(t)
	doc, err := os.ReadFile(filepath.Join(root, "docs", "methods.md"))
	if err != nil {
		t.Fatal(err)
	}
	sections := map[string]bool{}
	heading := regexp.MustCompile(`(?m)^#{2,4} (§[0-9]+(?:\.[0-9]+)?|Appendix [A-Z])\b`)
	for _, m := range heading.FindAllStringSubmatch(string(doc), -1) {
		sections[m[1]] = true
	}
	for _, want := range []string{"§0", "§6", "§7", "§8", "§13", "Appendix A", "Appendix B"} {
		if !sections[want] {
			t.Errorf("docs/methods.md lacks a heading for %s", want)
		}
	}
	cite := regexp.MustCompile(`docs/methods\.md,? ((?:§[0-9]+(?:\.[0-9]+)?)|Appendix [A-Z])`)
	also := regexp.MustCompile(`^(?:,| and| or)? ?(§[0-9]+(?:\.[0-9]+)?)`)
	n := 0
	for _, f := range repoTextFiles(t, root) {
		for i, line := range strings.Split(string(f.body), "\n") {
			for _, loc := range cite.FindAllStringSubmatchIndex(line, -1) {
				refs := []string{line[loc[2]:loc[3]]}
				rest := line[loc[1]:]
				for { // "§3 and §12", "§10, §13"
					m := also.FindStringSubmatch(rest)
					if m == nil {
						break
					}
					refs = append(refs, m[1])
					rest = rest[len(m[0]):]
				}
				for _, r := range refs {
					n++
					if !sections[r] {
						t.Errorf("%s:%d cites docs/methods.md %s, which has no such section", f.rel, i+1, r)
					}
				}
			}
		}
	}
	if n == 0 {
		t.Error("found no citation of docs/methods.md at all; the scan is broken")
	}
}
