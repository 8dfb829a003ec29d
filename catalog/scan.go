package catalog

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"hash/fnv"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"tracelift/ecg"
)

// NewEntry returns an entry for the relative path p with every
// measurement unknown (NaN).
func NewEntry(p string) Entry {
	n := math.NaN()
	return Entry{Path: p, Quality: n, HeartBPM: n, PRMS: n, QRSMS: n, QTMS: n, QTcMS: n, Seconds: n}
}

// Extensions are the file name extensions (lower case) that Scan treats as
// ECG images.
var Extensions = []string{".png", ".jpg", ".jpeg", ".tif", ".tiff", ".bmp", ".gif", ".webp", ".pdf"}

// Input is one file found by Scan.
type Input struct {
	Rel  string // path relative to the scanned folder, slash-separated
	Abs  string // path as given to the file system
	Size int64  // bytes
}

// FileName is the usual name of a catalogue file in an output folder.
const FileName = "catalog.sqlite"

// Scan lists the image files under root, recursing into subfolders, in
// lexical order of their relative paths. Left out are hidden files and
// folders (name starting with "."), every folder in skip (for example the
// output folder when it lies inside root; compared as files, so another
// spelling of the same folder or a symbolic link to it is recognised too)
// and every folder below root that holds a catalogue (FileName): the
// output folder of another run, whose overlays and PDFs are images but not
// inputs. A root that cannot be read wraps ecg.ErrUnreadable.
func Scan(root string, skip ...string) ([]Input, error) {
	st, err := os.Stat(root)
	if err != nil {
		return nil, fmt.Errorf("catalog: scan %s: %w: %v", root, ecg.ErrUnreadable, err)
	}
	if !st.IsDir() {
		return nil, fmt.Errorf("catalog: scan %s: %w: not a folder", root, ecg.ErrUnreadable)
	}
	var skipInfo []os.FileInfo
	for _, s := range skip {
		if fi, err := os.Stat(s); err == nil && fi.IsDir() {
			skipInfo = append(skipInfo, fi)
		}
	}
	var out []Input
	err = filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		name := d.Name()
		if p != root && strings.HasPrefix(name, ".") {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() {
			if p != root && skipFolder(p, skipInfo) {
				return filepath.SkipDir
			}
			return nil
		}
		if !d.Type().IsRegular() || !isImageName(name) {
			return nil
		}
		rel, err := filepath.Rel(root, p)
		if err != nil {
			return err
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		out = append(out, Input{Rel: filepath.ToSlash(rel), Abs: p, Size: info.Size()})
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("catalog: scan %s: %w: %v", root, ecg.ErrUnreadable, err)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Rel < out[j].Rel })
	return out, nil
}

// skipFolder reports whether the folder dir is one of skip or holds a
// catalogue.
func skipFolder(dir string, skip []os.FileInfo) bool {
	if fi, err := os.Stat(filepath.Join(dir, FileName)); err == nil && fi.Mode().IsRegular() {
		return true
	}
	if len(skip) == 0 {
		return false
	}
	fi, err := os.Stat(dir)
	if err != nil {
		return false
	}
	for _, s := range skip {
		if os.SameFile(fi, s) {
			return true
		}
	}
	return false
}

func isImageName(name string) bool {
	ext := strings.ToLower(filepath.Ext(name))
	for _, e := range Extensions {
		if ext == e {
			return true
		}
	}
	return false
}

// Shard selects share K of N (1 ≤ K ≤ N) of an archive's inputs. The zero
// value (or N ≤ 1) selects everything.
type Shard struct{ K, N int }

// ParseShard reads "K/N", for example "3/8".
func ParseShard(s string) (Shard, error) {
	k, n, ok := strings.Cut(s, "/")
	if !ok {
		return Shard{}, fmt.Errorf("shard %q: want K/N, for example 2/8", s)
	}
	ki, err1 := strconv.Atoi(strings.TrimSpace(k))
	ni, err2 := strconv.Atoi(strings.TrimSpace(n))
	if err1 != nil || err2 != nil || ni < 1 || ki < 1 || ki > ni {
		return Shard{}, fmt.Errorf("shard %q: want K/N with 1 ≤ K ≤ N, for example 2/8", s)
	}
	return Shard{K: ki, N: ni}, nil
}

func (s Shard) String() string {
	if s.N <= 1 {
		return "1/1"
	}
	return fmt.Sprintf("%d/%d", s.K, s.N)
}

// Has reports whether the input with relative path rel belongs to the
// shard: FNV-1a-64(rel) mod N = K − 1. The choice depends only on the
// path, so every machine given the same archive agrees on it.
func (s Shard) Has(rel string) bool {
	if s.N <= 1 {
		return true
	}
	h := fnv.New64a()
	h.Write([]byte(rel))
	return int(h.Sum64()%uint64(s.N)) == s.K-1
}

// Filter returns the inputs that belong to the shard.
func (s Shard) Filter(in []Input) []Input {
	var out []Input
	for _, x := range in {
		if s.Has(x.Rel) {
			out = append(out, x)
		}
	}
	return out
}

// HashFile returns the hex SHA-256 of the file's bytes. Errors wrap
// ecg.ErrUnreadable.
func HashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", fmt.Errorf("%s: %w: %v", path, ecg.ErrUnreadable, err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("%s: %w: %v", path, ecg.ErrUnreadable, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
