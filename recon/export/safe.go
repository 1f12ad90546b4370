package export

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"strings"
)

// Role is a file a command reads or writes, with what it is to the user
// ("the capture", "--report"), so a clash can be named.
type Role struct {
	What string
	Path string
}

// CheckClashes refuses outputs that are one of the inputs or another
// output: the same file by resolved identity, through symbolic or hard
// links, "..", or a folder reached two ways, and for outputs that do not
// exist yet the same resolved folder and name. Not even a forced write may
// replace an input, so callers check this before anything else. Roles
// with an empty path are skipped.
func CheckClashes(inputs, outputs []Role) error {
	for i, out := range outputs {
		if out.Path == "" {
			continue
		}
		for _, in := range inputs {
			if in.Path != "" && SameFile(out.Path, in.Path) {
				return fmt.Errorf("%s %s is %s %s: give the output another name (not even --force replaces an input)", out.What, out.Path, in.What, in.Path)
			}
		}
		for _, other := range outputs[:i] {
			if other.Path != "" && SameFile(out.Path, other.Path) {
				return fmt.Errorf("%s %s is the same file as %s %s: give each output its own name", out.What, out.Path, other.What, other.Path)
			}
		}
	}
	return nil
}

// SameFile reports whether two paths name one file: the same resolved
// location (folder with its links resolved, plus the name), or, when both
// exist, the same file as os.SameFile sees it.
func SameFile(a, b string) bool {
	if location(a) == location(b) {
		return true
	}
	sa, errA := os.Stat(a)
	sb, errB := os.Stat(b)
	return errA == nil && errB == nil && os.SameFile(sa, sb)
}

// location is path made absolute with the links of its folders resolved,
// as far up as the folders exist; the name itself is kept, so it works for
// files that are not there yet.
func location(path string) string {
	abs, err := filepath.Abs(path)
	if err != nil {
		abs = filepath.Clean(path)
	}
	dir, name := filepath.Dir(abs), filepath.Base(abs)
	var rest []string
	for {
		if real, err := filepath.EvalSymlinks(dir); err == nil {
			dir = real
			break
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			break
		}
		rest = append([]string{filepath.Base(dir)}, rest...)
		dir = parent
	}
	loc := filepath.Join(append(append([]string{dir}, rest...), name)...)
	if runtime.GOOS == "darwin" || runtime.GOOS == "windows" {
		// Their usual file systems ignore case.
		loc = strings.ToLower(loc)
	}
	return loc
}

// CheckFile reports whether a single file can be written to path: its
// folder exists and takes new files, path is not a folder and, unless
// force, no file is there (ErrExists). Commands call it before long work.
func CheckFile(path string, force bool) error {
	if err := checkFolder(path); err != nil {
		return err
	}
	if st, err := os.Stat(path); err == nil && st.IsDir() {
		return folderError(path, path)
	}
	if !force {
		if _, err := os.Lstat(path); err == nil {
			return fmt.Errorf("%s %w", path, ErrExists)
		}
	}
	return nil
}

// checkFolder: the folder of path exists, is a folder and takes a new
// file (tried with a temporary file, which sees read-only mounts, ACLs
// and permissions alike).
func checkFolder(path string) error {
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("%s: the output folder %s does not exist", path, dir)
	case err != nil:
		return fmt.Errorf("%s: the output folder: %w", path, err)
	case !st.IsDir():
		return fmt.Errorf("%s: %s is not a folder", path, dir)
	}
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".*"+partialSuffix)
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return fmt.Errorf("%s: cannot write in the folder %s: %v", path, dir, err)
	}
	tmp.Close()
	os.Remove(tmp.Name())
	return nil
}

// folderError refuses an output path that is a folder (not even force
// replaces one), suggesting a name beside it that is free.
func folderError(folder, output string) error {
	ext := filepath.Ext(output)
	stem := strings.TrimSuffix(filepath.Base(output), ext)
	if strings.HasSuffix(folder, ".recipe.json") {
		return fmt.Errorf("%s is a folder where the sidecar of %s would go: give the export another name, such as %s", folder, output, freeName(filepath.Dir(output), stem, ext))
	}
	return fmt.Errorf("%s is a folder: give a file name, such as %s", folder, freeName(folder, stem, ext))
}

// freeName is dir/stem+ext, or with -2, -3 … added to stem, the first whose
// file and sidecar are both free.
func freeName(dir, stem, ext string) string {
	for n := 1; ; n++ {
		name := stem
		if n > 1 {
			name = fmt.Sprintf("%s-%d", stem, n)
		}
		p := filepath.Join(dir, name+ext)
		_, errFile := os.Lstat(p)
		_, errSidecar := os.Lstat(SidecarPath(p))
		if errors.Is(errFile, fs.ErrNotExist) && errors.Is(errSidecar, fs.ErrNotExist) || n > 1000 {
			return p
		}
	}
}

// SaveFile writes data to path as Write writes an export: through a
// temporary file in the same folder, synced and renamed, never replacing
// an existing file unless force (ErrExists), and leaving nothing behind on
// failure. The build command writes its report with it.
func SaveFile(path string, data []byte, force bool) error {
	if err := CheckFile(path, force); err != nil {
		return err
	}
	return placeFiles(filepath.Dir(path), []pendingFile{{path: path, encode: func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	}}}, force, nil)
}

// partialSuffix ends the name of a file being written: "." + name + "." +
// digits + partialSuffix, beside its final name.
const partialSuffix = ".spotloom-partial"

// pendingFile is one file of an export: where it goes and how its bytes
// are produced.
type pendingFile struct {
	path   string
	encode func(io.Writer) error
	temp   string // set once written and synced
}

// placeFiles writes every file to a temporary file in dir (same folder, so
// the rename cannot cross file systems), syncs it, and only when all are
// complete moves them into place. Without force an existing file is never
// replaced: the final step links rather than renames where the file system
// allows it, which fails atomically if the name appeared in the meantime.
// On any failure every temporary file, and any file already placed, is
// removed.
func placeFiles(dir string, files []pendingFile, force bool, wrap func(io.Writer) io.Writer) (err error) {
	defer func() {
		if err != nil {
			for _, f := range files {
				if f.temp != "" {
					os.Remove(f.temp)
				}
			}
		}
	}()
	for i := range files {
		if err := writeTemp(dir, &files[i], wrap); err != nil {
			return err
		}
	}
	var placed []string
	for i := range files {
		if err := place(files[i].temp, files[i].path, force); err != nil {
			for _, p := range placed {
				os.Remove(p)
			}
			return err
		}
		files[i].temp = ""
		placed = append(placed, files[i].path)
	}
	syncDir(dir)
	return nil
}

func writeTemp(dir string, f *pendingFile, wrap func(io.Writer) io.Writer) error {
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(f.path)+".*"+partialSuffix)
	if err != nil {
		return fmt.Errorf("%s: cannot create a file in %s: %w", f.path, dir, err)
	}
	f.temp = tmp.Name()
	var w io.Writer = tmp
	if wrap != nil {
		w = wrap(tmp)
	}
	if err := f.encode(w); err != nil {
		tmp.Close()
		return fmt.Errorf("%s: %w", f.path, err)
	}
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return fmt.Errorf("%s: %w", f.path, err)
	}
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		return fmt.Errorf("%s: writing to disk: %w", f.path, err)
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("%s: %w", f.path, err)
	}
	return nil
}

// place moves temp to path. Without force it refuses to replace a file.
func place(temp, path string, force bool) error {
	if force {
		if err := os.Rename(temp, path); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
		return nil
	}
	err := os.Link(temp, path)
	if err == nil {
		os.Remove(temp)
		return nil
	}
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s %w", path, ErrExists)
	}
	// The file system has no hard links (FAT, some network shares): check
	// and rename, with a short window in which another writer could win.
	if _, statErr := os.Lstat(path); statErr == nil {
		return fmt.Errorf("%s %w", path, ErrExists)
	}
	if err := os.Rename(temp, path); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

// syncDir makes the renames durable where the system allows syncing a
// folder; failing to is not an error because the files are complete.
func syncDir(dir string) {
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
}
