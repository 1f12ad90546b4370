package export

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
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

// File is one file of a batch that WriteFiles places all or none of.
type File struct {
	Path string
	// Data is the file's content, unless Encode writes it.
	Data   []byte
	Encode func(io.Writer) error
}

// SaveFile writes data to path as Write writes an export: through a
// temporary file in the same folder, synced and renamed, never replacing
// an existing file unless force (ErrExists), and leaving nothing behind on
// failure. The recipe command writes with it.
func SaveFile(path string, data []byte, force bool) error {
	return WriteFiles(context.Background(), []File{{Path: path, Data: data}}, force)
}

// WriteFiles writes every file to a temporary file beside it and, only
// when all are complete, moves them into place: all of them or none.
// Without force an existing file is never replaced (ErrExists); with
// force, a failure while placing them puts back every file that was
// there. Cancelling ctx stops the writing and removes the temporaries.
// Each file's lock is held throughout, so two writers of the same name
// never mix their files.
func WriteFiles(ctx context.Context, files []File, force bool) error {
	paths := make([]string, len(files))
	for i, f := range files {
		if err := CheckFile(f.Path, force); err != nil {
			return err
		}
		paths[i] = f.Path
	}
	return withLocks(ctx, paths, func() error {
		pending := make([]pendingFile, len(files))
		for i, f := range files {
			pending[i] = pendingFile{path: f.Path, encode: f.encoder(), replace: force}
		}
		return placeFiles(ctx, pending, nil)
	})
}

// encoder is the function that writes the file's bytes.
func (f File) encoder() func(io.Writer) error {
	if f.Encode != nil {
		return f.Encode
	}
	data := f.Data
	return func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	}
}

// The names of the files a write keeps beside its outputs: "." + name +
// "." + digits + suffix for a file being written and for the previous
// file kept until the new ones are all in place, "." + name + lockSuffix
// for the lock. The digits and suffixes let a later run tell a stale one
// left by a killed run from someone else's file.
const (
	partialSuffix  = ".spotloom-partial"
	previousSuffix = ".spotloom-previous"
	lockSuffix     = ".spotloom-lock"
)

// renameFile is os.Rename; tests replace it to make a step fail.
var renameFile = os.Rename

// pendingFile is one file of an export: where it goes and how its bytes
// are produced.
type pendingFile struct {
	path    string
	encode  func(io.Writer) error
	replace bool   // an existing file may be replaced
	temp    string // set once written and synced
	backup  string // the file it replaced, until all are placed
	moved   bool   // backup was made by moving the file, not linking it
	placed  bool
}

// withLocks runs fn holding the lock of every path, taken in one order
// so that two writers cannot wait for each other, after removing the
// temporaries that a killed run left for these names.
func withLocks(ctx context.Context, paths []string, fn func() error) error {
	names := make([]string, 0, len(paths))
	for _, p := range paths {
		names = append(names, location(p))
	}
	slices.Sort(names)
	names = slices.Compact(names)
	var held []func()
	defer func() {
		for i := len(held) - 1; i >= 0; i-- {
			held[i]()
		}
	}()
	for _, n := range names {
		release, err := lock(ctx, n)
		if err != nil {
			return err
		}
		held = append(held, release)
		removeStale(n)
	}
	return fn()
}

// lockName is the lock file of path.
func lockName(path string) string {
	return filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+lockSuffix)
}

// removeStale removes the temporaries of path that no running write
// owns: the caller holds path's lock.
func removeStale(path string) {
	dir, base := filepath.Dir(path), filepath.Base(path)
	entries, err := os.ReadDir(dir)
	if err != nil {
		return
	}
	for _, e := range entries {
		if isTemporaryOf(e.Name(), base) {
			os.Remove(filepath.Join(dir, e.Name()))
		}
	}
}

// isTemporaryOf reports whether name is a temporary of base: "." + base +
// "." + digits + one of the suffixes.
func isTemporaryOf(name, base string) bool {
	rest, ok := strings.CutPrefix(name, "."+base+".")
	if !ok {
		return false
	}
	for _, suffix := range []string{partialSuffix, previousSuffix} {
		if digits, ok := strings.CutSuffix(rest, suffix); ok && digits != "" && strings.Trim(digits, "0123456789") == "" {
			return true
		}
	}
	return false
}

// ctxWriter stops a write when ctx is cancelled.
type ctxWriter struct {
	ctx context.Context
	w   io.Writer
}

func (c ctxWriter) Write(p []byte) (int, error) {
	if err := c.ctx.Err(); err != nil {
		return 0, err
	}
	return c.w.Write(p)
}

// placeFiles writes every file to a temporary file beside it (same
// folder, so the rename cannot cross file systems), syncs it, and only
// when all are complete moves them into place. A file that may not be
// replaced is placed with a link rather than a rename where the file
// system allows it, which fails atomically if the name appeared in the
// meantime. On any failure every temporary file is removed, every file
// already placed is taken away and every file it replaced is put back.
// The caller holds the files' locks.
func placeFiles(ctx context.Context, files []pendingFile, wrap func(io.Writer) io.Writer) (err error) {
	defer func() {
		for _, f := range files {
			if f.temp != "" {
				os.Remove(f.temp)
			}
		}
	}()
	for i := range files {
		if err := writeTemp(ctx, &files[i], wrap); err != nil {
			return err
		}
	}
	// The last moment to stop: placing is quick and, once begun, is
	// finished or undone whatever happens.
	if err := ctx.Err(); err != nil {
		return err
	}
	for i := range files {
		if err := placeOne(&files[i]); err != nil {
			restore(files[:i+1])
			return err
		}
	}
	dirs := map[string]bool{}
	for _, f := range files {
		if f.backup != "" {
			os.Remove(f.backup)
		}
		dirs[filepath.Dir(f.path)] = true
	}
	for dir := range dirs {
		syncDir(dir)
	}
	return nil
}

func writeTemp(ctx context.Context, f *pendingFile, wrap func(io.Writer) io.Writer) error {
	dir := filepath.Dir(f.path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(f.path)+".*"+partialSuffix)
	if err != nil {
		return fmt.Errorf("%s: cannot create a file in %s: %w", f.path, dir, err)
	}
	f.temp = tmp.Name()
	var w io.Writer = ctxWriter{ctx, tmp}
	if wrap != nil {
		w = wrap(w)
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

// placeOne moves f's temporary file to its path. A file that may be
// replaced is first kept under a temporary name, so it can be put back.
func placeOne(f *pendingFile) error {
	if !f.replace {
		if err := placeNew(f.temp, f.path); err != nil {
			return err
		}
		f.temp, f.placed = "", true
		return nil
	}
	if st, err := os.Lstat(f.path); err == nil {
		if st.IsDir() {
			return folderError(f.path, f.path)
		}
		backup, moved, err := keepPrevious(f.path)
		if err != nil {
			return err
		}
		f.backup, f.moved = backup, moved
	}
	if err := renameFile(f.temp, f.path); err != nil {
		return fmt.Errorf("%s: %w", f.path, err)
	}
	f.temp, f.placed = "", true
	return nil
}

// keepPrevious gives the file at path a second name beside it and returns
// that name: a hard link, so the file stays in place until the new one is
// renamed over it, or where the file system has no links, a rename
// (moved).
func keepPrevious(path string) (name string, moved bool, err error) {
	dir, base := filepath.Dir(path), filepath.Base(path)
	for try := 0; ; try++ {
		name := filepath.Join(dir, "."+base+"."+strconv.FormatUint(uint64(rand.Uint32()), 10)+previousSuffix)
		err := os.Link(path, name)
		if err == nil {
			return name, false, nil
		}
		if errors.Is(err, fs.ErrExist) && try < 100 {
			continue
		}
		if err := renameFile(path, name); err != nil {
			return "", false, fmt.Errorf("%s: cannot keep the previous file while writing the new one: %w", path, err)
		}
		return name, true, nil
	}
}

// restore undoes placed files: the file each replaced goes back, a file
// that replaced nothing is removed.
func restore(files []pendingFile) {
	for i := len(files) - 1; i >= 0; i-- {
		f := &files[i]
		switch {
		case f.backup != "" && !f.placed && !f.moved:
			// Still in place under its own name: drop the second one.
			os.Remove(f.backup)
			f.backup = ""
		case f.backup != "":
			if renameFile(f.backup, f.path) == nil {
				f.backup = ""
			}
		case f.placed:
			os.Remove(f.path)
		}
	}
}

// placeNew moves temp to path, refusing to replace a file.
func placeNew(temp, path string) error {
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
	if err := renameFile(temp, path); err != nil {
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
