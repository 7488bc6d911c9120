package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"time"

	"gocloud.dev/blob"
	"gocloud.dev/blob/fileblob"
	_ "gocloud.dev/blob/s3blob" // s3:// URLs
	"gocloud.dev/gcerrors"
	"golang.org/x/sync/errgroup"

	"github.com/kbc-project/kbc/bundle"
)

// blobStore keeps versions in a bucket (a folder through fileblob, or S3
// through s3blob); see the package doc for the layout.
type blobStore struct {
	bucket *blob.Bucket
	prefix string // "" or ending in "/"
	// root is the folder of a folder store, where create-only writes use
	// link(2) (fileblob's IfNotExist is checked only within one process).
	root string
	// rootFS opens the objects of a folder store for reading, so that
	// none is read through a symlink that leaves the folder (os.Root).
	rootFS *os.Root
}

// completeMarker is the object written last into a version.
type completeMarker struct {
	BundleID    string    `json:"bundle_id"`
	PublishedAt time.Time `json:"published_at"`
	Files       int       `json:"files"`
	Bytes       int64     `json:"bytes"`
}

func openFolder(dir string) (*blobStore, error) {
	if dir == "" {
		return nil, errors.New("no folder given")
	}
	dir, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	b, err := fileblob.OpenBucket(dir, &fileblob.Options{Metadata: fileblob.MetadataDontWrite, NoTempDir: true})
	if err != nil {
		return nil, err
	}
	r, err := os.OpenRoot(dir)
	if err != nil {
		b.Close()
		return nil, err
	}
	return &blobStore{bucket: b, root: dir, rootFS: r}, nil
}

// openS3 opens s3://BUCKET/PREFIX?query: the path is our key prefix, the
// rest goes to gocloud's s3blob URL opener.
func openS3(ctx context.Context, loc string) (*blobStore, error) {
	u, err := url.Parse(loc)
	if err != nil {
		return nil, err
	}
	prefix := strings.Trim(u.Path, "/")
	if prefix != "" {
		prefix += "/"
	}
	u.Path = ""
	u.User = nil
	b, err := blob.OpenBucket(ctx, u.String())
	if err != nil {
		return nil, err
	}
	return &blobStore{bucket: b, prefix: prefix}, nil
}

func (s *blobStore) exists(ctx context.Context) error {
	if s.rootFS != nil {
		return nil // a folder: OpenExisting looked before Open made it
	}
	ok, err := s.bucket.IsAccessible(ctx)
	if err != nil {
		return err
	}
	if !ok {
		return ErrNoStore
	}
	return nil
}

func (s *blobStore) close() error {
	if s.rootFS != nil {
		s.rootFS.Close()
	}
	return s.bucket.Close()
}

// Bounds on what is read from a store, whatever it holds.
const (
	// maxSmallObject bounds a complete marker and a pointer revision
	// (a few hundred bytes each).
	maxSmallObject = 1 << 20
	// maxUnsizedFile bounds a file whose manifest lists no size (a
	// bundle written before sizes were recorded).
	maxUnsizedFile = 4 << 30
)

// errNotRegular is the error for an object of a folder store that is not a
// regular file: a symlink, a FIFO, a device, a folder.
var errNotRegular = errors.New("not a regular file")

// isNotFound reports whether err means the object does not exist.
func isNotFound(err error) bool {
	return gcerrors.Code(err) == gcerrors.NotFound || errors.Is(err, fs.ErrNotExist)
}

// openObject opens the object key for reading. In a folder store it opens
// only a regular file inside the store's folder: not through a symlink
// (which could bring in /dev/zero or a file from elsewhere), and never
// waiting on a FIFO (opened non-blocking, then checked with fstat).
func (s *blobStore) openObject(ctx context.Context, key string) (io.ReadCloser, error) {
	if s.rootFS == nil {
		return s.bucket.NewReader(ctx, key, nil)
	}
	name := filepath.FromSlash(key)
	fi, err := s.rootFS.Lstat(name)
	if err != nil {
		return nil, err
	}
	if !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: %w (%s)", key, errNotRegular, fi.Mode().Type())
	}
	f, err := s.rootFS.OpenFile(name, os.O_RDONLY|syscall.O_NONBLOCK, 0)
	if err != nil {
		return nil, err
	}
	fi2, err := f.Stat()
	if err == nil && (!fi2.Mode().IsRegular() || !os.SameFile(fi, fi2)) {
		err = fmt.Errorf("%s: %w (replaced while being opened)", key, errNotRegular)
	}
	if err != nil {
		f.Close()
		return nil, err
	}
	return f, nil
}

// readObject reads the object key whole, refusing one longer than limit
// bytes without reading past it.
func (s *blobStore) readObject(ctx context.Context, key string, limit int64) ([]byte, error) {
	r, err := s.openObject(ctx, key)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	data, err := io.ReadAll(io.LimitReader(r, limit+1))
	if err != nil {
		return nil, err
	}
	if int64(len(data)) > limit {
		return nil, fmt.Errorf("%s: larger than %d bytes", key, limit)
	}
	return data, nil
}

func (s *blobStore) versionKey(id string) string { return s.prefix + "versions/" + id + "/" }
func (s *blobStore) pointerKey(name string) string {
	return s.prefix + "pointers/" + name + "/"
}

// isHexID reports whether id looks like a bundle id (64 lower-case hex
// digits), so that it can be used inside a key.
func isHexID(id string) bool {
	if len(id) != 64 {
		return false
	}
	for i := 0; i < len(id); i++ {
		if c := id[i]; !('0' <= c && c <= '9' || 'a' <= c && c <= 'f') {
			return false
		}
	}
	return true
}

func (s *blobStore) complete(ctx context.Context, id string) (bool, error) {
	if !isHexID(id) {
		return false, fmt.Errorf("invalid bundle id %q", id)
	}
	return s.bucket.Exists(ctx, s.versionKey(id)+"complete")
}

// createOnly writes data under key unless key exists, in which case it
// returns an error wrapping ErrConflict. In S3 this is a PUT with
// If-None-Match: * (gocloud's WriterOptions.IfNotExist); in a folder it is
// a new file linked into place with link(2), which fails when the name
// exists, atomically even between processes.
func (s *blobStore) createOnly(ctx context.Context, key string, data []byte) error {
	if s.root != "" {
		p := filepath.Join(s.root, filepath.FromSlash(key))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return err
		}
		f, err := os.CreateTemp(filepath.Dir(p), ".new-*")
		if err != nil {
			return err
		}
		defer os.Remove(f.Name())
		_, err = f.Write(data)
		if err == nil {
			err = f.Sync()
		}
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err == nil {
			err = os.Chmod(f.Name(), 0o644)
		}
		if err != nil {
			return err
		}
		if err := os.Link(f.Name(), p); err != nil {
			if errors.Is(err, fs.ErrExist) {
				return fmt.Errorf("%s exists: %w", key, ErrConflict)
			}
			return err
		}
		return syncDir(filepath.Dir(p))
	}
	err := s.bucket.WriteAll(ctx, key, data, &blob.WriterOptions{IfNotExist: true, ContentType: "application/json"})
	if gcerrors.Code(err) == gcerrors.FailedPrecondition {
		return fmt.Errorf("%s exists: %w", key, ErrConflict)
	}
	return err
}

func syncDir(dir string) error {
	f, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	f.Sync() // best effort: not every system can flush a folder
	return nil
}

// staleObjectAge is how long a temporary object in a folder store must have
// gone unwritten before a publish removes it as left by a killed one: an
// upload in progress writes to its file all the time (common practice, no
// source).
const staleObjectAge = 10 * time.Minute

// isTempObject reports whether name is a temporary object of a folder
// store: fileblob's NAME.<hex nanoseconds>.tmp or createOnly's .new-*.
func isTempObject(name string) bool {
	if strings.HasPrefix(name, ".new-") {
		return true
	}
	rest, ok := strings.CutSuffix(name, ".tmp")
	if !ok {
		return false
	}
	i := strings.LastIndexByte(rest, '.')
	if i < 0 || i == len(rest)-1 {
		return false
	}
	_, err := strconv.ParseUint(rest[i+1:], 16, 64)
	return err == nil
}

// sweepTemp removes, in a folder store, the temporary objects that killed
// publishes left behind (best effort: a store it cannot walk is left as
// it is).
func (s *blobStore) sweepTemp() {
	if s.root == "" {
		return
	}
	filepath.WalkDir(s.root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || !d.Type().IsRegular() || !isTempObject(d.Name()) {
			return nil
		}
		if fi, err := d.Info(); err == nil && time.Since(fi.ModTime()) > staleObjectAge {
			os.Remove(p)
		}
		return nil
	})
}

// bundleFiles returns the files of the bundle m describes, manifest.json
// first.
func bundleFiles(m *bundle.Manifest) ([]string, error) {
	files := []string{bundle.ManifestFile}
	for name := range m.Files {
		if !validFilePath(name) || name == bundle.ManifestFile {
			return nil, fmt.Errorf("manifest lists an invalid file path %q", name)
		}
		files = append(files, name)
	}
	return files, nil
}

// validFilePath reports whether name may be a file of a bundle: a slash
// path that stays inside the bundle folder.
func validFilePath(name string) bool {
	return fs.ValidPath(name) && name != "." && !strings.Contains(name, `\`)
}

// transferLimit is how many objects move at once: enough to hide a round
// trip per object on a remote store (a common choice, no source).
const transferLimit = 4

func (s *blobStore) putVersion(ctx context.Context, dir string, m *bundle.Manifest, st *Store, res *PublishResult) error {
	if !isHexID(m.BundleID) {
		return fmt.Errorf("invalid bundle id %q", m.BundleID)
	}
	s.sweepTemp()
	base := s.versionKey(m.BundleID)
	files, err := bundleFiles(m)
	if err != nil {
		return err
	}
	if ok, err := s.complete(ctx, m.BundleID); err != nil {
		return err
	} else if ok {
		res.Skipped = len(files) + 1
		return nil
	}
	var mu sync.Mutex
	var count atomic.Int64
	var total atomic.Int64
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(transferLimit)
	for _, name := range files {
		g.Go(func() error {
			key := base + "files/" + name
			p := filepath.Join(dir, filepath.FromSlash(name))
			fi, err := os.Stat(p)
			if err != nil {
				return err
			}
			total.Add(fi.Size())
			// Write only if new: objects are named by content (the
			// version's id and the file's path), and a stored object
			// is whole (S3 PUT, fileblob rename), so one that exists
			// is this file; Pull checks every byte anyway.
			ok, err := s.bucket.Exists(gctx, key)
			if err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
			mu.Lock()
			defer mu.Unlock()
			if ok {
				res.Skipped++
				return nil
			}
			mu.Unlock()
			err = s.upload(gctx, key, p)
			mu.Lock()
			if err != nil {
				return fmt.Errorf("uploading %s: %w", name, err)
			}
			res.Uploaded++
			res.UploadedBytes += fi.Size()
			if st.afterObject != nil {
				st.afterObject(int(count.Add(1)))
			}
			return nil
		})
	}
	if err := g.Wait(); err != nil {
		return err
	}
	marker, err := json.Marshal(completeMarker{BundleID: m.BundleID, PublishedAt: st.now().UTC(), Files: len(files), Bytes: total.Load()})
	if err != nil {
		return err
	}
	// Last: the marker that makes the version complete. A concurrent
	// publisher of the same bundle may have written it first; fine.
	if err := s.createOnly(ctx, base+"complete", marker); err != nil && !errors.Is(err, ErrConflict) {
		return fmt.Errorf("marking %s complete: %w", m.BundleID, err)
	}
	res.Uploaded++
	res.UploadedBytes += int64(len(marker))
	return nil
}

func (s *blobStore) upload(ctx context.Context, key, p string) (err error) {
	f, err := os.Open(p)
	if err != nil {
		return err
	}
	defer f.Close()
	wctx, cancel := context.WithCancel(ctx)
	defer cancel()
	w, err := s.bucket.NewWriter(wctx, key, &blob.WriterOptions{ContentType: "application/octet-stream"})
	if err != nil {
		return err
	}
	if _, err := w.ReadFrom(f); err != nil {
		cancel() // abandons the write: nothing is stored
		w.Close()
		return err
	}
	return w.Close()
}

func (s *blobStore) getVersion(ctx context.Context, id, tmp string) error {
	base := s.versionKey(id) + "files/"
	data, err := s.readObject(ctx, base+bundle.ManifestFile, bundle.MaxManifestSize)
	if err != nil {
		return fmt.Errorf("%s: %w", bundle.ManifestFile, err)
	}
	if err := os.WriteFile(filepath.Join(tmp, bundle.ManifestFile), data, 0o644); err != nil {
		return err
	}
	m, err := bundle.ReadManifest(tmp)
	if err != nil {
		return err
	}
	files, err := bundleFiles(m)
	if err != nil {
		return err
	}
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(transferLimit)
	for _, name := range files[1:] {
		g.Go(func() error {
			limit, ok := m.Sizes[name]
			if !ok {
				limit = maxUnsizedFile
			}
			if err := s.download(gctx, base+name, filepath.Join(tmp, filepath.FromSlash(name)), limit); err != nil {
				if isNotFound(err) {
					return nil // Verify names it as missing
				}
				return fmt.Errorf("%s: %w", name, err)
			}
			return nil
		})
	}
	return g.Wait()
}

// download copies the object key into the new file p, at most limit+1
// bytes of it.
func (s *blobStore) download(ctx context.Context, key, p string, limit int64) error {
	r, err := s.openObject(ctx, key)
	if err != nil {
		return err
	}
	defer r.Close()
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		return err
	}
	f, err := os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return err
	}
	// One byte past the limit is enough for Verify to name the file as
	// changed (by its size, without hashing it).
	_, err = io.Copy(f, io.LimitReader(r, limit+1))
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// listDirs returns the names of the "folders" directly under prefix.
func (s *blobStore) listDirs(ctx context.Context, prefix string) ([]string, error) {
	it := s.bucket.List(&blob.ListOptions{Prefix: prefix, Delimiter: "/"})
	var out []string
	for {
		obj, err := it.Next(ctx)
		if err == io.EOF {
			return out, nil
		}
		if err != nil {
			return nil, err
		}
		if obj.IsDir {
			out = append(out, strings.TrimSuffix(strings.TrimPrefix(obj.Key, prefix), "/"))
		}
	}
}

func (s *blobStore) versions(ctx context.Context) ([]Version, error) {
	ids, err := s.listDirs(ctx, s.prefix+"versions/")
	if err != nil {
		return nil, err
	}
	var out []Version
	for _, id := range ids {
		if !isHexID(id) {
			continue
		}
		v := Version{ID: id}
		data, err := s.readObject(ctx, s.versionKey(id)+"complete", maxSmallObject)
		switch {
		case err == nil:
			var mk completeMarker
			if err := json.Unmarshal(data, &mk); err != nil {
				return nil, fmt.Errorf("%s: %w", s.versionKey(id)+"complete", err)
			}
			v.Complete, v.PublishedAt = true, mk.PublishedAt
		case !isNotFound(err):
			return nil, err
		}
		data, err = s.readObject(ctx, s.versionKey(id)+"files/"+bundle.ManifestFile, bundle.MaxManifestSize)
		if err == nil {
			var m bundle.Manifest
			if json.Unmarshal(data, &m) == nil {
				v.BuiltAt, v.SourceCommit, v.Counts = m.BuiltAt, m.SourceCommit, m.Counts
			}
		} else if !isNotFound(err) {
			return nil, err
		}
		out = append(out, v)
	}
	return out, nil
}

func (s *blobStore) deleteVersion(ctx context.Context, id string) error {
	base := s.versionKey(id)
	if err := s.bucket.Delete(ctx, base+"complete"); err != nil && gcerrors.Code(err) != gcerrors.NotFound {
		return err
	}
	it := s.bucket.List(&blob.ListOptions{Prefix: base})
	for {
		obj, err := it.Next(ctx)
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if err := s.bucket.Delete(ctx, obj.Key); err != nil && gcerrors.Code(err) != gcerrors.NotFound {
			return err
		}
	}
	if s.root != "" { // fileblob leaves empty folders behind
		os.RemoveAll(filepath.Join(s.root, filepath.FromSlash(base)))
	}
	return nil
}

// revisionName is a pointer revision's object name: zero-padded, so that
// names sort as numbers.
func revisionName(rev int64) string { return fmt.Sprintf("%020d.json", rev) }

// pointer returns the newest revision of the pointer name.
func (s *blobStore) pointer(ctx context.Context, name string) (Pointer, string, error) {
	prefix := s.pointerKey(name)
	it := s.bucket.List(&blob.ListOptions{Prefix: prefix})
	var best int64 = -1
	for {
		obj, err := it.Next(ctx)
		if err == io.EOF {
			break
		}
		if err != nil {
			return Pointer{}, "", err
		}
		rest := strings.TrimPrefix(obj.Key, prefix)
		if len(rest) != len(revisionName(0)) || !strings.HasSuffix(rest, ".json") {
			continue // a temporary file, or something else
		}
		n, err := strconv.ParseInt(strings.TrimSuffix(rest, ".json"), 10, 64)
		if err == nil && n > best {
			best = n
		}
	}
	if best < 0 {
		return Pointer{}, "", fmt.Errorf("pointer %s: %w", name, ErrNotFound)
	}
	key := prefix + revisionName(best)
	data, err := s.readObject(ctx, key, maxSmallObject)
	if err != nil {
		return Pointer{}, "", err
	}
	var p Pointer
	if err := json.Unmarshal(data, &p); err != nil {
		return Pointer{}, "", fmt.Errorf("%s: %w", key, err)
	}
	if p.Name != name || p.Revision != best || !isHexID(p.BundleID) {
		return Pointer{}, "", fmt.Errorf("%s: not a pointer revision %d of %s", key, best, name)
	}
	return p, strconv.FormatInt(best, 10), nil
}

// setPointer writes the next revision of p.Name after rev, create-only: the
// revision number, not the content, decides, so a concurrent writer that
// wrote the same bytes still makes this fail.
func (s *blobStore) setPointer(ctx context.Context, p Pointer, rev string) (Pointer, error) {
	var prev int64
	if rev != "" {
		var err error
		if prev, err = strconv.ParseInt(rev, 10, 64); err != nil {
			return Pointer{}, err
		}
	}
	if prev < 0 || prev == math.MaxInt64 {
		return Pointer{}, fmt.Errorf("pointer %s is at revision %d, the last there can be: remove its folder in the store to start it again at 1", p.Name, prev)
	}
	p.Revision = prev + 1
	data, err := json.MarshalIndent(p, "", "  ")
	if err != nil {
		return Pointer{}, err
	}
	err = s.createOnly(ctx, s.pointerKey(p.Name)+revisionName(p.Revision), append(data, '\n'))
	if errors.Is(err, ErrConflict) {
		cur, _, cerr := s.pointer(ctx, p.Name)
		if cerr == nil {
			return Pointer{}, fmt.Errorf("%w: it was read at revision %d, and another publisher has since moved it to %s (revision %d, commit %s, at %s); nothing was overwritten: run again to move it",
				ErrConflict, prev, cur.BundleID, cur.Revision, orNone(cur.SourceCommit), cur.PublishedAt.Format(time.RFC3339))
		}
		return Pointer{}, fmt.Errorf("%w: revision %d was written by another publisher", ErrConflict, p.Revision)
	}
	if err != nil {
		return Pointer{}, err
	}
	return p, nil
}

func orNone(s string) string {
	if s == "" {
		return "(none)"
	}
	return s
}

func (s *blobStore) pointerNames(ctx context.Context) ([]string, error) {
	return s.listDirs(ctx, s.prefix+"pointers/")
}
