//go:build unix

package report_test

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"syscall"
	"testing"

	"github.com/assay-dev/assay/report"
)

// TestResolveSaveTarget checks each kind of --save target the check must
// refuse before a run, with the reason in the message, and the ones it
// must accept, leaving no file behind.
func TestResolveSaveTarget(t *testing.T) {
	dir := t.TempDir()
	mk := func(name string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte("previous"), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	existing := mk("old.json")
	notDir := mk("plain.txt")
	if err := os.Mkdir(filepath.Join(dir, "taken.json"), 0o755); err != nil {
		t.Fatal(err)
	}
	fifo := filepath.Join(dir, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name, path, want string // want "" means accepted
	}{
		{"new file", filepath.Join(dir, "new.json"), ""},
		{"existing file", existing, ""},
		{"upper-case extension", filepath.Join(dir, "NEW.CSV"), ""},
		{"empty path", "", "needs a file name"},
		{"other extension", filepath.Join(dir, "r.xlsx"), "must be .json or .csv"},
		{"directory", filepath.Join(dir, "taken.json"), "is a directory"},
		{"missing parent", filepath.Join(dir, "nope", "r.json"), "directory " + filepath.Join(dir, "nope") + " does not exist"},
		{"parent is a file", filepath.Join(notDir, "r.json"), "is not a directory"},
		{"named pipe", fifo, "not a regular file (a named pipe)"},
	}
	if _, err := os.Stat("/dev/full"); err == nil {
		tests = append(tests, struct{ name, path, want string }{"device", "/dev/full", "not a regular file (a character device)"})
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := report.ResolveSaveTarget(tc.path)
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("got %v, want the target accepted", err)
			case tc.want != "" && err == nil:
				t.Errorf("accepted; want an error containing %q", tc.want)
			case tc.want != "" && !strings.Contains(err.Error(), tc.want):
				t.Errorf("got %v, want it to contain %q", err, tc.want)
			}
		})
	}
	if b, _ := os.ReadFile(existing); string(b) != "previous" {
		t.Errorf("the existing file changed: %q", b)
	}
	want := []string{"old.json", "pipe.csv", "plain.txt", "taken.json"}
	if got := dirNames(t, dir); !reflect.DeepEqual(got, want) {
		t.Errorf("got files %v after the checks, want %v", got, want)
	}
}

// TestResolveSaveTargetReadOnlyDir checks a directory whose permissions
// forbid writing. Root is not stopped by permission bits (and a save as
// root would succeed), so the case is skipped for root.
func TestResolveSaveTargetReadOnlyDir(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root can write to directories without write permission")
	}
	dir := t.TempDir()
	if err := os.Chmod(dir, 0o555); err != nil {
		t.Fatal(err)
	}
	defer os.Chmod(dir, 0o755)
	_, err := report.ResolveSaveTarget(filepath.Join(dir, "r.json"))
	if err == nil || !strings.Contains(err.Error(), "cannot create a file in the directory") {
		t.Errorf("got %v, want an error saying no file can be created", err)
	}
}

// TestResolveSaveTargetReadOnlyFileSystem checks a directory where no file
// can be created even by root: /sys, a kernel file system that refuses new
// files (EACCES). It runs as root too, where the permission test cannot.
func TestResolveSaveTargetReadOnlyFileSystem(t *testing.T) {
	if fi, err := os.Stat("/sys"); err != nil || !fi.IsDir() {
		t.Skip("no /sys on this system")
	}
	_, err := report.ResolveSaveTarget("/sys/assay-results.json")
	if err == nil || !strings.Contains(err.Error(), "cannot create a file in the directory /sys") {
		t.Errorf("got %v, want an error saying no file can be created in /sys", err)
	}
}

// TestResolveSaveTargetSymlinks checks that a link is followed: the checks
// apply to its final target, ResolveSaveTarget returns that target, and
// saving there writes through the link, which stays a link. A link to a
// device, a dangling link into a missing directory, a loop and a target
// with another extension are refused.
func TestResolveSaveTargetSymlinks(t *testing.T) {
	dir := t.TempDir()
	real := filepath.Join(dir, "data", "results.json")
	if err := os.Mkdir(filepath.Dir(real), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(real, []byte("previous"), 0o644); err != nil {
		t.Fatal(err)
	}
	link := func(name, target string) string {
		p := filepath.Join(dir, name)
		if err := os.Symlink(target, p); err != nil {
			t.Fatal(err)
		}
		return p
	}
	toReal := link("latest.json", filepath.Join("data", "results.json")) // relative target
	chain := link("chain.json", toReal)
	dangling := link("fresh.json", filepath.Join(dir, "data", "new.json"))
	nowhere := link("nowhere.json", filepath.Join(dir, "missing", "r.json"))
	loopA := filepath.Join(dir, "a.json")
	link("b.json", loopA)
	link("a.json", filepath.Join(dir, "b.json"))
	otherExt := link("other.json", filepath.Join(dir, "data", "results.txt"))

	for _, tc := range []struct{ name, path, target string }{
		{"link", toReal, real},
		{"link to a link", chain, real},
		{"dangling link", dangling, filepath.Join(dir, "data", "new.json")},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := report.ResolveSaveTarget(tc.path)
			if err != nil || got != tc.target {
				t.Errorf("got %q, %v; want %q", got, err, tc.target)
			}
		})
	}
	bad := []struct{ name, path, want string }{
		{"dangling into a missing directory", nowhere, "does not exist"},
		{"loop", loopA, "too many levels of symbolic links"},
		{"other extension", otherExt, "must also end in .json"},
	}
	if _, err := os.Stat("/dev/full"); err == nil {
		bad = append(bad, struct{ name, path, want string }{"link to a device", link("dev.json", "/dev/full"), "not a regular file"})
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			_, err := report.ResolveSaveTarget(tc.path)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got %v, want an error containing %q", err, tc.want)
			}
		})
	}

	// Writing through the link: the target gets the results, the link
	// stays a link.
	target, err := report.ResolveSaveTarget(toReal)
	if err != nil {
		t.Fatal(err)
	}
	if err := report.Save(target, savedReport(), ranAt); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Lstat(toReal); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link was replaced: %v, %v", fi.Mode(), err)
	}
	b, err := os.ReadFile(real)
	if err != nil || !strings.Contains(string(b), `"format": "assay-results"`) && !strings.Contains(string(b), `"format":"assay-results"`) {
		t.Errorf("the link's target does not hold the results: %.80q (%v)", b, err)
	}
}
