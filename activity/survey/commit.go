package survey

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"time"

	"spotsift/activity"
)

// LockFile is the advisory lock of an output folder: a survey or a merge
// holds it (flock) for as long as it writes into the folder.
const LockFile = ".spotsift.lock"

// Markers of a star folder's temporary siblings inside stars/: a new
// folder being written (".<folder>.new-*"), the previous folder being
// replaced (".<folder>.old-*"). Both are left only by a killed run and are
// removed by the next.
const (
	newMarker = ".new-"
	oldMarker = ".old-"
)

// lockDir takes the advisory lock of outDir, waiting while another survey
// or merge holds it. wait, when not nil, is called once if the lock is
// busy. The wait ends with an error when ctx is cancelled.
func lockDir(ctx context.Context, outDir string, wait func(msg string)) (unlock func(), err error) {
	p := filepath.Join(outDir, LockFile)
	f, err := os.OpenFile(p, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("survey: locking the output folder: %w", err)
	}
	told := false
	for {
		err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if err == nil {
			break
		}
		if !errors.Is(err, syscall.EWOULDBLOCK) && !errors.Is(err, syscall.EINTR) {
			f.Close()
			return nil, fmt.Errorf("survey: locking the output folder %s: %w", outDir, err)
		}
		if !told && wait != nil {
			wait(fmt.Sprintf("another survey or merge is writing into %s; waiting for it to finish (Ctrl-C to give up)", outDir))
			told = true
		}
		select {
		case <-ctx.Done():
			f.Close()
			return nil, fmt.Errorf("%w: another survey or merge is writing into %s (its lock %s is held): %w", ErrBusy, outDir, LockFile, ctx.Err())
		case <-time.After(100 * time.Millisecond):
		}
	}
	return func() {
		syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}, nil
}

// starDir returns the folder of a star, stars/<Folder(name)> inside
// outDir, and checks that it lies inside outDir's stars folder. Every path
// the survey writes or removes for a star comes from here: never from a
// state file.
func starDir(outDir, name string) (string, error) {
	f := Folder(name)
	if f == "" || f == "." || f == ".." || strings.ContainsAny(f, `/\`) {
		return "", fmt.Errorf("survey: star %q has no usable folder name", name)
	}
	stars, err := filepath.Abs(filepath.Join(outDir, StarsDir))
	if err != nil {
		return "", err
	}
	dir := filepath.Join(stars, f)
	if filepath.Dir(dir) != stars {
		return "", fmt.Errorf("survey: the folder of star %q would lie outside %s", name, stars)
	}
	return filepath.Join(outDir, StarsDir, f), nil
}

// newStarDir makes a fresh hidden folder beside the star's folder, where
// its outputs are written before commitStarDir renames it into place.
func newStarDir(dir string) (string, error) {
	tmp, err := os.MkdirTemp(filepath.Dir(dir), "."+filepath.Base(dir)+newMarker)
	if err != nil {
		return "", err
	}
	if err := os.Chmod(tmp, 0o755); err != nil {
		os.Remove(tmp)
		return "", err
	}
	return tmp, nil
}

// commitStarDir replaces dir by the finished folder tmp: the old folder is
// renamed aside, tmp renamed into place, and the old one removed. A kill
// at any point leaves either the old folder whole, or the new folder
// whole, or no folder (the star is then analysed again); the hidden
// leftovers are removed by cleanLeftovers.
func commitStarDir(dir, tmp string) error {
	old := ""
	if _, err := os.Lstat(dir); err == nil {
		o, err := os.MkdirTemp(filepath.Dir(dir), "."+filepath.Base(dir)+oldMarker)
		if err != nil {
			return err
		}
		old = filepath.Join(o, "x")
		if err := os.Rename(dir, old); err != nil {
			os.Remove(o)
			return err
		}
		defer os.RemoveAll(o)
	} else if !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if err := os.Rename(tmp, dir); err != nil {
		if old != "" {
			os.Rename(old, dir)
		}
		return err
	}
	return nil
}

// cleanLeftovers removes what killed runs left in outDir: hidden new and
// old star folders in stars/, and the temporary files of atomic writes
// (".<name>.tmp*") in outDir, its figures folder and every star folder.
// It only looks at names made by the survey itself and never follows a
// symbolic link.
func cleanLeftovers(outDir string) error {
	starsDir := filepath.Join(outDir, StarsDir)
	ents, err := os.ReadDir(starsDir)
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	dirs := []string{outDir, filepath.Join(outDir, "figures")}
	for _, d := range ents {
		n := d.Name()
		if strings.HasPrefix(n, ".") && (strings.Contains(n, newMarker) || strings.Contains(n, oldMarker) || strings.HasSuffix(n, ".merge-tmp")) {
			if err := os.RemoveAll(filepath.Join(starsDir, n)); err != nil {
				return err
			}
			continue
		}
		if d.IsDir() && d.Type()&fs.ModeSymlink == 0 {
			dirs = append(dirs, filepath.Join(starsDir, n), filepath.Join(starsDir, n, "figures"))
		}
	}
	for _, dir := range dirs {
		fe, err := os.ReadDir(dir)
		if err != nil {
			continue
		}
		for _, f := range fe {
			if f.Type().IsRegular() && isTempName(f.Name()) {
				if err := os.Remove(filepath.Join(dir, f.Name())); err != nil && !errors.Is(err, fs.ErrNotExist) {
					return err
				}
			}
		}
	}
	return nil
}

// isTempName reports whether a file name is one of rvfit.WriteFileAtomic's
// or the catalogue's temporary names: ".<name>.tmp<suffix>".
func isTempName(n string) bool {
	return strings.HasPrefix(n, ".") && strings.Contains(n, ".tmp")
}

// hashOutputs returns the hex SHA-256 of every file of a star folder but
// its state file: relative paths and contents, in path order. The state
// file records it, and a star is taken as unchanged only when its folder
// still hashes the same.
func hashOutputs(dir string) (string, error) {
	var files []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.Type().IsRegular() && !(filepath.Dir(p) == dir && d.Name() == StateFile) && !isTempName(d.Name()) {
			rel, err := filepath.Rel(dir, p)
			if err != nil {
				return err
			}
			files = append(files, rel)
		}
		return nil
	})
	if err != nil {
		return "", err
	}
	sort.Strings(files)
	h := sha256.New()
	for _, rel := range files {
		f, err := os.Open(filepath.Join(dir, rel))
		if err != nil {
			return "", err
		}
		fh := sha256.New()
		_, err = io.Copy(fh, f)
		f.Close()
		if err != nil {
			return "", err
		}
		fmt.Fprintf(h, "%s\t%x\n", filepath.ToSlash(rel), fh.Sum(nil))
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// regularFile checks that p names a regular file (after symbolic links):
// a FIFO, a device or a socket would block or never end.
func regularFile(p, what string) error {
	fi, err := os.Stat(p)
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	if !fi.Mode().IsRegular() {
		return fmt.Errorf("%s %s: %w (%s)", what, p, ErrNotRegular, activity.FileKind(fi.Mode()))
	}
	return nil
}
