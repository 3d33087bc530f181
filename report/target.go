package report

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
)

// maxLinks bounds how many symbolic links ResolveSaveTarget follows, as
// the kernel bounds it (40 on Linux; from memory).
const maxLinks = 40

// ResolveSaveTarget checks a --save target before any query runs, so that a
// long run does not end in a file that cannot be written. It refuses, with
// a message that says why:
//
//   - an empty path, or one whose extension is not .json or .csv;
//   - a directory;
//   - an existing file that is not a regular file, such as a device
//     (/dev/full, /dev/null), a pipe or a socket: Save renames a new file
//     over the target, which would replace the device node;
//   - a parent directory that does not exist or is not a directory;
//   - a parent directory in which no file can be created (read-only
//     permissions or a read-only file system). This is probed by creating
//     and removing an empty hidden file, as Save creates its temporary
//     file, so that the answer is right for root too, whom permission bits
//     do not stop.
//
// A symbolic link is followed to its final target and the checks apply to
// that target; writing there writes through the link, leaving the link in
// place. The target must have the same extension as the link, since the
// extension chooses the format.
//
// It returns the file Save should write: path itself, or the final target
// of a symbolic link (which may not exist yet). Passing it to Save writes
// through the link; passing path itself would replace the link by a
// regular file.
func ResolveSaveTarget(path string) (string, error) {
	if path == "" {
		return "", errors.New("--save needs a file name")
	}
	target, err := followLinks(path)
	if err != nil {
		return "", fmt.Errorf("cannot save to %s: %w", path, err)
	}
	shown := path
	if target != path {
		shown = fmt.Sprintf("%s (a link to %s)", path, target)
	}
	fi, err := os.Stat(target)
	switch {
	case err == nil && fi.IsDir():
		return "", fmt.Errorf("cannot save to %s: it is a directory", shown)
	case err == nil && !fi.Mode().IsRegular():
		return "", fmt.Errorf("cannot save to %s: it is not a regular file (%s); the results are saved by replacing the file", shown, fileKind(fi.Mode()))
	case err != nil && !missing(err):
		return "", fmt.Errorf("cannot save to %s: %w", shown, unwrapPath(err))
	}
	if ext := strings.ToLower(filepath.Ext(path)); ext != ".json" && ext != ".csv" {
		return "", fmt.Errorf("cannot save to %s: the extension must be .json or .csv", path)
	} else if strings.ToLower(filepath.Ext(target)) != ext {
		return "", fmt.Errorf("cannot save to %s: the format is chosen by the extension, so the link's target must also end in %s", shown, ext)
	}
	dir := filepath.Dir(target)
	di, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return "", fmt.Errorf("cannot save to %s: the directory %s does not exist", shown, dir)
	case err != nil:
		return "", fmt.Errorf("cannot save to %s: %w", shown, unwrapPath(err))
	case !di.IsDir():
		return "", fmt.Errorf("cannot save to %s: %s is not a directory", shown, dir)
	}
	probe, err := os.CreateTemp(dir, ".assay-save-check-*.tmp")
	if err != nil {
		return "", fmt.Errorf("cannot save to %s: cannot create a file in the directory %s: %w", shown, dir, unwrapPath(err))
	}
	name := probe.Name()
	probe.Close()
	if err := os.Remove(name); err != nil {
		return "", fmt.Errorf("cannot save to %s: cannot remove a file from the directory %s: %w", shown, dir, unwrapPath(err))
	}
	return target, nil
}

// followLinks follows path through symbolic links to a path that is not a
// link (and may not exist). A relative link target is read from the link's
// directory.
func followLinks(path string) (string, error) {
	p := path
	for i := 0; ; i++ {
		fi, err := os.Lstat(p)
		if missing(err) {
			return p, nil
		}
		if err != nil {
			return "", unwrapPath(err)
		}
		if fi.Mode()&fs.ModeSymlink == 0 {
			return p, nil
		}
		if i == maxLinks {
			return "", errors.New("too many levels of symbolic links")
		}
		t, err := os.Readlink(p)
		if err != nil {
			return "", unwrapPath(err)
		}
		if !filepath.IsAbs(t) {
			t = filepath.Join(filepath.Dir(p), t)
		}
		p = t
	}
}

// missing reports whether err says a path does not exist, also when a
// part of it that should be a directory is a file (ENOTDIR): the parent
// check then says which.
func missing(err error) bool {
	return errors.Is(err, fs.ErrNotExist) || errors.Is(err, syscall.ENOTDIR)
}

// unwrapPath drops the operation and path that *fs.PathError repeats.
func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// fileKind names the kind of a file that is not a regular file.
func fileKind(m fs.FileMode) string {
	switch {
	case m&fs.ModeCharDevice != 0:
		return "a character device"
	case m&fs.ModeDevice != 0:
		return "a block device"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe"
	case m&fs.ModeSocket != 0:
		return "a socket"
	}
	return "a special file"
}
