package store

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

// DefaultPointer is the pointer Publish moves and Pull follows when no other
// is named.
const DefaultPointer = "latest"

// ErrConflict means a pointer was moved by someone else between the moment
// Publish (or Point) read it and the moment it tried to move it; nothing was
// overwritten. Check with errors.Is.
var ErrConflict = errors.New("pointer moved by another publisher")

// ErrNotFound means the pointer or version asked for is not in the store.
var ErrNotFound = errors.New("not found")

// ErrNoStore means OpenExisting found no store at the location: a folder
// that is not there, an S3 bucket that does not exist, or a registry
// repository nothing was ever pushed to. Check with errors.Is.
var ErrNoStore = errors.New("no such store")

// Store is an open bundle store. Its methods may be called concurrently.
type Store struct {
	b           backend
	display     string // the location with credentials redacted
	defaultName string // the pointer used when none is named
	red         redactor
	now         func() time.Time
	// hooks for tests: afterObject runs after each uploaded object with
	// the running count; beforePointers runs after the upload, before the
	// pointers move.
	afterObject    func(n int)
	beforePointers func()
}

// Pointer is a named reference to a version: "latest" and the tags given to
// Publish.
type Pointer struct {
	// Name is the pointer's name, e.g. "latest".
	Name string `json:"name"`
	// BundleID is the version it names.
	BundleID string `json:"bundle_id"`
	// SourceCommit and BuiltAt come from the bundle's manifest.
	SourceCommit string    `json:"source_commit,omitempty"`
	BuiltAt      time.Time `json:"built_at,omitzero"`
	// PublishedAt is when the pointer was moved (blob stores only).
	PublishedAt time.Time `json:"published_at,omitzero"`
	// Revision counts the moves of this pointer in a blob store (1 for
	// the first); in an OCI registry it is 0.
	Revision int64 `json:"revision,omitempty"`
	// Previous is the bundle id the pointer named before this move.
	Previous string `json:"previous,omitempty"`
}

// Version is one bundle in the store.
type Version struct {
	ID           string         `json:"id"`
	BuiltAt      time.Time      `json:"built_at,omitzero"`
	PublishedAt  time.Time      `json:"published_at,omitzero"`
	SourceCommit string         `json:"source_commit,omitempty"`
	Counts       map[string]int `json:"counts,omitempty"`
	// Pointers names the pointers that name this version, sorted.
	Pointers []string `json:"pointers"`
	// Complete is false for a version whose upload never finished (a
	// publish that was interrupted); Pull refuses it.
	Complete bool `json:"complete"`
}

// PublishOptions are the options of Publish. The zero value moves the
// store's default pointer only.
type PublishOptions struct {
	// Pointers are more pointers to move to the new version besides the
	// default one (kbc publish --tag).
	Pointers []string
}

// PublishResult says what Publish did.
type PublishResult struct {
	BundleID string `json:"bundle_id"`
	// FilesDigest is the bundle's files digest (see Ref.Digest).
	FilesDigest string `json:"files_digest,omitempty"`
	// Uploaded and Skipped count objects (files, markers, layers) sent
	// and found already in the store; UploadedBytes sums the former.
	Uploaded      int   `json:"uploaded"`
	Skipped       int   `json:"skipped"`
	UploadedBytes int64 `json:"uploaded_bytes"`
	// Pointers are the pointers as moved, in the order given.
	Pointers []Pointer `json:"pointers"`
}

// Ref names what Pull fetches: a version by id, else the version a pointer
// names (the store's default pointer when Pointer is empty too).
type Ref struct {
	Pointer string
	ID      string
	// Digest, when set, pins every file, not only the passages the id
	// names: Pull fails unless the version's manifest has this files
	// digest (bundle.Manifest.FilesDigest, "sha256:<hex>") and its files
	// match it.
	Digest string
}

// backend is one kind of store. Revisions are opaque to Store: a counter in
// blob stores, a manifest digest in registries; "" means the pointer does
// not exist.
type backend interface {
	complete(ctx context.Context, id string) (bool, error)
	putVersion(ctx context.Context, dir string, m *bundle.Manifest, s *Store, res *PublishResult) error
	getVersion(ctx context.Context, id, tmp string) error
	versions(ctx context.Context) ([]Version, error)
	deleteVersion(ctx context.Context, id string) error
	pointer(ctx context.Context, name string) (Pointer, string, error)
	setPointer(ctx context.Context, p Pointer, rev string) (Pointer, error)
	// pointerNames lists the names that may be pointers; Store.pointers
	// reads each (a name that is not a valid pointer name is skipped).
	pointerNames(ctx context.Context) ([]string, error)
	// exists returns ErrNoStore when the store is not there (a folder
	// store is checked before it is opened, as opening creates it).
	exists(ctx context.Context) error
	close() error
}

// Open opens the store at loc, one of:
//
//	DIR or file:///DIR                           a folder (created when missing)
//	s3://BUCKET[/PREFIX][?endpoint=URL&use_path_style=true&region=R]
//	oci://HOST[:PORT]/REPO[:TAG]                 an OCI registry (TAG: the default pointer)
//
// S3 credentials come from the AWS environment variables and files (the
// SDK's default chain); registry credentials from the Docker configuration
// (~/.docker/config.json, DOCKER_CONFIG). Registries on 127.0.0.1 or
// localhost are spoken to over plain HTTP. Errors never hold a credential.
func Open(ctx context.Context, loc string) (*Store, error) {
	red := newRedactor(loc, os.Getenv)
	s := &Store{display: red.location(loc), defaultName: DefaultPointer, red: red, now: time.Now}
	var err error
	switch {
	case strings.HasPrefix(loc, "oci://"):
		var tag string
		s.b, tag, err = openOCI(strings.TrimPrefix(loc, "oci://"))
		if tag != "" {
			s.defaultName = tag
		}
	case strings.HasPrefix(loc, "s3://"):
		s.b, err = openS3(ctx, loc)
	case strings.HasPrefix(loc, "file://"):
		u, perr := url.Parse(loc)
		if perr != nil {
			err = perr
			break
		}
		s.b, err = openFolder(u.Path)
	case strings.Contains(loc, "://"):
		err = fmt.Errorf("unknown store kind %q (want a folder, file://, s3:// or oci://)", loc[:strings.Index(loc, "://")])
	default:
		s.b, err = openFolder(loc)
	}
	if err != nil {
		return nil, red.wrap(fmt.Errorf("opening store %s: %w", s.display, err))
	}
	return s, nil
}

// OpenExisting is Open for a store that must be there already: it returns
// an error that wraps ErrNoStore, and creates nothing, when the folder, the
// S3 bucket or the registry repository does not exist. Commands that read
// a store (list, pull, prune) use it, so that a mistyped location is not
// taken for an empty store.
func OpenExisting(ctx context.Context, loc string) (*Store, error) {
	if dir, ok := folderPath(loc); ok {
		if _, err := os.Stat(dir); errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("opening store %s: %w", loc, ErrNoStore)
		}
	}
	s, err := Open(ctx, loc)
	if err != nil {
		return nil, err
	}
	if err := s.b.exists(ctx); err != nil {
		s.Close()
		return nil, s.red.wrap(fmt.Errorf("opening store %s: %w", s.display, err))
	}
	return s, nil
}

// folderPath returns the folder of a folder store's location.
func folderPath(loc string) (string, bool) {
	if strings.HasPrefix(loc, "file://") {
		u, err := url.Parse(loc)
		return u.Path, err == nil && u.Path != ""
	}
	return loc, loc != "" && !strings.Contains(loc, "://")
}

// String returns the store's location with credentials redacted.
func (s *Store) String() string { return s.display }

// Close releases the store's connections.
func (s *Store) Close() error { return s.red.wrap(s.b.close()) }

// Publish uploads the bundle in dir as a version (named by its bundle id)
// and then moves the store's default pointer and opts.Pointers to it.
//
// The bundle must verify. Every object of the version is written only if it
// is not there yet, and a version already complete is not uploaded again; a
// version becomes complete (visible to Pull) only after all its objects
// are stored. The pointers are read before the upload and moved after it
// with a conditional write: if another publisher moved one in between, that
// pointer is left as the other publisher set it and Publish returns an error
// wrapping ErrConflict (the version itself stays stored; running Publish
// again moves the pointer).
func (s *Store) Publish(ctx context.Context, dir string, opts PublishOptions) (*PublishResult, error) {
	res, err := s.publish(ctx, dir, opts)
	return res, s.red.wrap(err)
}

func (s *Store) publish(ctx context.Context, dir string, opts PublishOptions) (*PublishResult, error) {
	names, err := s.pointerNames(opts.Pointers)
	if err != nil {
		return nil, err
	}
	m, err := bundle.ReadManifest(dir)
	if err != nil {
		return nil, fmt.Errorf("publishing %s: %w", dir, err)
	}
	bad, err := bundle.Verify(dir)
	if err != nil {
		return nil, fmt.Errorf("publishing %s: %w", dir, err)
	}
	if len(bad) > 0 {
		return nil, fmt.Errorf("publishing %s: %w", dir, &MismatchError{Mismatches: bad})
	}
	// Read the pointers first: a pointer moved by someone else while we
	// upload is a conflict, not something to overwrite.
	revs := make([]string, len(names))
	olds := make([]Pointer, len(names))
	for i, name := range names {
		olds[i], revs[i], err = s.b.pointer(ctx, name)
		if err != nil && !errors.Is(err, ErrNotFound) {
			return nil, fmt.Errorf("reading pointer %s in %s: %w", name, s.display, err)
		}
	}
	res := &PublishResult{BundleID: m.BundleID, FilesDigest: m.FilesDigest}
	if err := s.b.putVersion(ctx, dir, m, s, res); err != nil {
		return res, fmt.Errorf("publishing %s to %s stopped before the version was complete, so no pointer was moved (run the same publish again to finish it): %w", m.BundleID, s.display, err)
	}
	if s.beforePointers != nil {
		s.beforePointers()
	}
	now := s.now().UTC()
	for i, name := range names {
		p := Pointer{Name: name, BundleID: m.BundleID, SourceCommit: m.SourceCommit, BuiltAt: m.BuiltAt,
			PublishedAt: now, Previous: olds[i].BundleID}
		p, err := s.b.setPointer(ctx, p, revs[i])
		if err != nil {
			return res, fmt.Errorf("version %s is stored in %s, but pointer %s: %w", m.BundleID, s.display, name, err)
		}
		res.Pointers = append(res.Pointers, p)
	}
	return res, nil
}

// Point moves the pointer name (the default one when empty) to the complete
// version id, conditionally as Publish does: rolling back is pointing
// "latest" at an earlier version.
func (s *Store) Point(ctx context.Context, name, id string) (Pointer, error) {
	p, err := s.point(ctx, name, id)
	return p, s.red.wrap(err)
}

func (s *Store) point(ctx context.Context, name, id string) (Pointer, error) {
	names, err := s.pointerNames(nil)
	if err != nil {
		return Pointer{}, err
	}
	if name != "" {
		if err := checkPointerName(name); err != nil {
			return Pointer{}, err
		}
		names[0] = name
	}
	id, err = s.resolveID(ctx, id)
	if err != nil {
		return Pointer{}, err
	}
	vs, err := s.b.versions(ctx)
	if err != nil {
		return Pointer{}, err
	}
	i := slices.IndexFunc(vs, func(v Version) bool { return v.ID == id })
	if i < 0 || !vs[i].Complete {
		return Pointer{}, fmt.Errorf("version %s: %w in %s (or incomplete)", id, ErrNotFound, s.display)
	}
	old, rev, err := s.b.pointer(ctx, names[0])
	if err != nil && !errors.Is(err, ErrNotFound) {
		return Pointer{}, err
	}
	p := Pointer{Name: names[0], BundleID: id, SourceCommit: vs[i].SourceCommit, BuiltAt: vs[i].BuiltAt,
		PublishedAt: s.now().UTC(), Previous: old.BundleID}
	p, err = s.b.setPointer(ctx, p, rev)
	if err != nil {
		return Pointer{}, fmt.Errorf("pointer %s: %w", names[0], err)
	}
	return p, nil
}

// resolveID expands a unique prefix of at least 8 hex digits into a full
// bundle id.
func (s *Store) resolveID(ctx context.Context, id string) (string, error) {
	if len(id) == 64 {
		return id, nil
	}
	if len(id) < 8 {
		return "", fmt.Errorf("version id %q: give at least 8 hex digits", id)
	}
	vs, err := s.b.versions(ctx)
	if err != nil {
		return "", err
	}
	var found []string
	for _, v := range vs {
		if strings.HasPrefix(v.ID, id) {
			found = append(found, v.ID)
		}
	}
	switch len(found) {
	case 0:
		return "", fmt.Errorf("version %s: %w in %s", id, ErrNotFound, s.display)
	case 1:
		return found[0], nil
	}
	return "", fmt.Errorf("version id %s is ambiguous (%d versions start with it)", id, len(found))
}

func (s *Store) pointerNames(extra []string) ([]string, error) {
	names := []string{s.defaultName}
	for _, n := range extra {
		if err := checkPointerName(n); err != nil {
			return nil, err
		}
		if !slices.Contains(names, n) {
			names = append(names, n)
		}
	}
	return names, nil
}

// checkPointerName accepts the OCI tag grammar, [A-Za-z0-9_][A-Za-z0-9._-]{0,127}
// (OCI distribution spec v1.1, "Pulling manifests"), less the prefix
// reserved for versions.
func checkPointerName(n string) error {
	ok := len(n) >= 1 && len(n) <= 128 && !strings.HasPrefix(n, versionTagPrefix)
	for i := 0; ok && i < len(n); i++ {
		c := n[i]
		ok = 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' || c == '_' ||
			i > 0 && (c == '.' || c == '-')
	}
	if !ok {
		return fmt.Errorf("invalid pointer name %q: want letters, digits, '_', '.', '-' (not first), at most 128, not starting with %q", n, versionTagPrefix)
	}
	return nil
}

// Pull fetches a version into the folder dir: it downloads every file into a
// new folder beside dir, checks each against the SHA-256 in the bundle's
// manifest, and only then swaps it into place (see bundle.Install). Any
// mismatch returns a *MismatchError naming the files, and dir stays as it
// was.
//
// Pull trusts nothing the store holds beyond what it checks: manifest.json
// is read only up to bundle.MaxManifestSize, every other file only up to
// the size its manifest lists, and from a folder store only regular files
// inside the store's folder are read (no symlink, FIFO or device). The
// temporary folders of pulls that were killed before they could clean up
// are removed by the next pull into the same dir.
func (s *Store) Pull(ctx context.Context, dir string, ref Ref) (*bundle.Manifest, error) {
	m, err := s.pull(ctx, dir, ref)
	return m, s.red.wrap(err)
}

func (s *Store) pull(ctx context.Context, dir string, ref Ref) (_ *bundle.Manifest, err error) {
	id := ref.ID
	if id != "" {
		if id, err = s.resolveID(ctx, id); err != nil {
			return nil, err
		}
	} else {
		name := cmp.Or(ref.Pointer, s.defaultName)
		p, _, err := s.b.pointer(ctx, name)
		if err != nil {
			return nil, fmt.Errorf("pointer %s in %s: %w", name, s.display, err)
		}
		id = p.BundleID
	}
	ok, err := s.b.complete(ctx, id)
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, fmt.Errorf("version %s: %w in %s (or its upload never finished)", id, ErrNotFound, s.display)
	}
	dir = filepath.Clean(dir)
	// Locked while in use, so that the next pull can tell a folder left
	// by a killed one from a folder another pull is filling.
	tmp, unlock, err := bundle.TempDir(filepath.Dir(dir), "."+filepath.Base(dir)+".pull-")
	if err != nil {
		return nil, err
	}
	defer unlock()
	defer func() {
		if err != nil {
			os.RemoveAll(tmp)
		}
	}()
	if err := os.Chmod(tmp, 0o755); err != nil {
		return nil, err
	}
	if err := s.b.getVersion(ctx, id, tmp); err != nil {
		return nil, fmt.Errorf("pulling %s from %s: %w", id, s.display, err)
	}
	m, err := bundle.ReadManifest(tmp)
	if err != nil {
		return nil, fmt.Errorf("pulling %s from %s: manifest.json: %w", id, s.display, err)
	}
	bad, err := bundle.Verify(tmp)
	if err != nil {
		return nil, err
	}
	if m.BundleID != id {
		bad = append(bad, bundle.Mismatch{File: bundle.ManifestFile, Want: id, Got: m.BundleID, Problem: bundle.Changed})
	}
	if ref.Digest != "" && m.FilesDigest != ref.Digest {
		bad = append(bad, bundle.Mismatch{File: bundle.ManifestFile, Want: ref.Digest, Got: cmp.Or(m.FilesDigest, "no files digest"), Problem: bundle.Changed})
	}
	if len(bad) > 0 {
		return nil, fmt.Errorf("pulling %s from %s: %w", id, s.display, &MismatchError{Mismatches: bad})
	}
	if err := bundle.Install(tmp, dir); err != nil {
		return nil, err
	}
	return m, nil
}

// MismatchError lists the files of a bundle that do not match its manifest.
type MismatchError struct {
	Mismatches []bundle.Mismatch
}

func (e *MismatchError) Error() string {
	parts := make([]string, len(e.Mismatches))
	for i, m := range e.Mismatches {
		parts[i] = m.File + ": " + m.Problem
	}
	return "files do not match the manifest: " + strings.Join(parts, ", ")
}

// Versions lists the versions in the store, newest first (by publish time
// where the store keeps it, else build time, then id), each with the
// pointers that name it.
func (s *Store) Versions(ctx context.Context) ([]Version, error) {
	vs, err := s.versions(ctx)
	if err != nil {
		err = fmt.Errorf("listing versions in %s: %w", s.display, err)
	}
	return vs, s.red.wrap(err)
}

func (s *Store) versions(ctx context.Context) ([]Version, error) {
	vs, err := s.b.versions(ctx)
	if err != nil {
		return nil, err
	}
	ps, err := s.pointers(ctx)
	if err != nil {
		return nil, err
	}
	for i := range vs {
		vs[i].Pointers = []string{}
		for _, p := range ps {
			if p.BundleID == vs[i].ID {
				vs[i].Pointers = append(vs[i].Pointers, p.Name)
			}
		}
		slices.Sort(vs[i].Pointers)
	}
	slices.SortFunc(vs, func(a, b Version) int {
		return cmp.Or(b.PublishedAt.Compare(a.PublishedAt), b.BuiltAt.Compare(a.BuiltAt), strings.Compare(a.ID, b.ID))
	})
	return vs, nil
}

// pointers reads every pointer of the store; a name whose pointer went
// away since it was listed is skipped.
func (s *Store) pointers(ctx context.Context) ([]Pointer, error) {
	names, err := s.b.pointerNames(ctx)
	if err != nil {
		return nil, err
	}
	var out []Pointer
	for _, name := range names {
		if checkPointerName(name) != nil {
			continue
		}
		p, _, err := s.b.pointer(ctx, name)
		if errors.Is(err, ErrNotFound) {
			continue
		}
		if err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	return out, nil
}

// Pointers lists the store's pointers, sorted by name.
func (s *Store) Pointers(ctx context.Context) ([]Pointer, error) {
	ps, err := s.pointers(ctx)
	if err != nil {
		return nil, s.red.wrap(err)
	}
	slices.SortFunc(ps, func(a, b Pointer) int { return strings.Compare(a.Name, b.Name) })
	return ps, nil
}

// Prune removes complete versions beyond the keep newest (in the order of
// Versions), except those a pointer names, and returns the ids removed.
// Incomplete versions are left alone: one may be a publish in progress.
// A version's completion marker goes first, so a reader never sees half a
// removed version as complete.
func (s *Store) Prune(ctx context.Context, keep int) ([]string, error) {
	removed, err := s.prune(ctx, keep)
	return removed, s.red.wrap(err)
}

func (s *Store) prune(ctx context.Context, keep int) ([]string, error) {
	if keep < 0 {
		return nil, fmt.Errorf("keep %d: want 0 or more", keep)
	}
	vs, err := s.versions(ctx)
	if err != nil {
		return nil, err
	}
	var removed []string
	kept := 0
	for _, v := range vs {
		if !v.Complete {
			continue
		}
		if kept < keep || len(v.Pointers) > 0 {
			kept++
			continue
		}
		if err := s.b.deleteVersion(ctx, v.ID); err != nil {
			return removed, fmt.Errorf("removing %s from %s: %w", v.ID, s.display, err)
		}
		removed = append(removed, v.ID)
	}
	return removed, nil
}
