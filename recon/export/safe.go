package export

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// SaveFile writes data to path as Write writes an export: through a
// temporary file in the same folder, synced and renamed, never replacing
// an existing file unless force (ErrExists), and leaving nothing behind on
// failure. The build command writes its report with it.
func SaveFile(path string, data []byte, force bool) error {
	dir := filepath.Dir(path)
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return fmt.Errorf("%s: the folder %s does not exist", path, dir)
	}
	if !force {
		if _, err := os.Lstat(path); err == nil {
			return fmt.Errorf("%s %w", path, ErrExists)
		}
	}
	return placeFiles(dir, []pendingFile{{path: path, encode: func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	}}}, force, nil)
}

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
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(f.path)+".*.partial")
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
