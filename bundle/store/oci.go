package store

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/opencontainers/go-digest"
	ocispec "github.com/opencontainers/image-spec/specs-go/v1"
	"oras.land/oras-go/v2/content"
	"oras.land/oras-go/v2/errdef"
	"oras.land/oras-go/v2/registry/remote"
	"oras.land/oras-go/v2/registry/remote/auth"
	"oras.land/oras-go/v2/registry/remote/credentials"
	"oras.land/oras-go/v2/registry/remote/errcode"
	"oras.land/oras-go/v2/registry/remote/retry"

	"github.com/kbc-project/kbc/bundle"
)

// Media types of our OCI artifact: names of our own under the vnd. tree.
const (
	// ArtifactType is the artifactType of a bundle's OCI image manifest.
	ArtifactType = "application/vnd.kbc.bundle.v1"
	// MediaTypeFile is the media type of a layer holding one bundle file.
	MediaTypeFile = "application/vnd.kbc.bundle.file.v1"
	// MediaTypeIndex is the media type of the layer holding the index/
	// folder as a tar stream.
	MediaTypeIndex = "application/vnd.kbc.bundle.index.v1.tar"
	// AnnotationBundleID is the manifest annotation holding the bundle id.
	AnnotationBundleID = "vnd.kbc.bundle.id"
)

// versionTagPrefix begins the tag that names a version in a registry
// ("bundle-" and the bundle id); pointers may not use it.
const versionTagPrefix = "bundle-"

// ociStore keeps versions as OCI artifacts in one repository: each version is
// an image manifest tagged bundle-<id>; pointers are other tags.
type ociStore struct {
	repo *remote.Repository
}

// openOCI opens HOST[:PORT]/REPO[:TAG] and returns the tag, if any.
func openOCI(ref string) (*ociStore, string, error) {
	var tag string
	if slash := strings.Index(ref, "/"); slash > 0 {
		if colon := strings.LastIndex(ref, ":"); colon > slash {
			ref, tag = ref[:colon], ref[colon+1:]
			if err := checkPointerName(tag); err != nil {
				return nil, "", err
			}
		}
	}
	repo, err := remote.NewRepository(ref)
	if err != nil {
		return nil, "", err
	}
	host := repo.Reference.Host()
	if h, _, err := net.SplitHostPort(host); err == nil {
		host = h
	}
	// Plain HTTP only on the loopback interface, where a test or a local
	// registry runs; anything else is spoken to over TLS.
	repo.PlainHTTP = host == "localhost" || net.ParseIP(host).IsLoopback()
	cred := auth.StaticCredential("", auth.EmptyCredential) // none
	if cs, err := credentials.NewStoreFromDocker(credentials.StoreOptions{}); err == nil {
		cred = credentials.Credential(cs)
	}
	repo.Client = &auth.Client{Client: retry.DefaultClient, Cache: auth.NewCache(), Credential: cred}
	return &ociStore{repo: repo}, tag, nil
}

func (s *ociStore) close() error { return nil }

func notFound(err error) bool { return errors.Is(err, errdef.ErrNotFound) }

func (s *ociStore) complete(ctx context.Context, id string) (bool, error) {
	if !isHexID(id) {
		return false, fmt.Errorf("invalid bundle id %q", id)
	}
	// A registry accepts a manifest only once every blob it names is
	// stored, so a tagged version is complete.
	_, err := s.repo.Resolve(ctx, versionTagPrefix+id)
	if notFound(err) {
		return false, nil
	}
	return err == nil, err
}

// layer is one layer to push: where its bytes are and its descriptor.
type layer struct {
	path string
	desc ocispec.Descriptor
}

// manifestFor builds the layers and the image manifest of the bundle in
// dir. The index folder is packed into a tar file under tmpDir.
func manifestFor(dir string, m *bundle.Manifest, tmpDir string) ([]layer, []byte, error) {
	files, err := bundleFiles(m)
	if err != nil {
		return nil, nil, err
	}
	var layers []layer
	for _, name := range files {
		if strings.HasPrefix(name, bundle.IndexDir+"/") {
			continue
		}
		p := filepath.Join(dir, filepath.FromSlash(name))
		d, err := fileDigest(p, m.Files[name])
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w", name, err)
		}
		d.MediaType = MediaTypeFile
		d.Annotations = map[string]string{ocispec.AnnotationTitle: name}
		layers = append(layers, layer{p, d})
	}
	tarPath := filepath.Join(tmpDir, "index.tar")
	f, err := os.Create(tarPath)
	if err != nil {
		return nil, nil, err
	}
	h := sha256.New()
	cw := &countWriter{w: io.MultiWriter(f, h)}
	err = writeTar(cw, dir, bundle.IndexDir)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return nil, nil, fmt.Errorf("packing %s/: %w", bundle.IndexDir, err)
	}
	layers = append(layers, layer{tarPath, ocispec.Descriptor{
		MediaType:   MediaTypeIndex,
		Digest:      digest.NewDigestFromEncoded(digest.SHA256, hex.EncodeToString(h.Sum(nil))),
		Size:        cw.n,
		Annotations: map[string]string{ocispec.AnnotationTitle: bundle.IndexDir + "/"},
	}})
	slices.SortFunc(layers, func(a, b layer) int {
		return strings.Compare(a.desc.Annotations[ocispec.AnnotationTitle], b.desc.Annotations[ocispec.AnnotationTitle])
	})
	descs := make([]ocispec.Descriptor, len(layers))
	for i, l := range layers {
		descs[i] = l.desc
	}
	ann := map[string]string{AnnotationBundleID: m.BundleID}
	if m.SourceCommit != "" {
		ann[ocispec.AnnotationRevision] = m.SourceCommit
	}
	// The creation time is the bundle's build time, never the clock, so
	// the same bundle always gives the same manifest digest.
	if !m.BuiltAt.IsZero() {
		ann[ocispec.AnnotationCreated] = m.BuiltAt.UTC().Format(time.RFC3339)
	}
	man := ocispec.Manifest{
		MediaType:    ocispec.MediaTypeImageManifest,
		ArtifactType: ArtifactType,
		Config:       ocispec.DescriptorEmptyJSON,
		Layers:       descs,
		Annotations:  ann,
	}
	man.SchemaVersion = 2
	data, err := json.Marshal(man)
	return layers, data, err
}

// fileDigest returns the descriptor of the file p from the hash the bundle
// manifest lists for it ("sha256:<hex>") and its size. The hash is not
// re-read here: Publish verified the bundle, and the registry checks the
// digest of every blob it receives. manifest.json, which lists no hash of
// itself (ref ""), is hashed here.
func fileDigest(p, ref string) (ocispec.Descriptor, error) {
	fi, err := os.Stat(p)
	if err != nil {
		return ocispec.Descriptor{}, err
	}
	if ref == "" {
		data, err := os.ReadFile(p)
		if err != nil {
			return ocispec.Descriptor{}, err
		}
		return ocispec.Descriptor{Digest: digest.FromBytes(data), Size: int64(len(data))}, nil
	}
	d, err := digest.Parse(ref)
	if err != nil {
		return ocispec.Descriptor{}, err
	}
	return ocispec.Descriptor{Digest: d, Size: fi.Size()}, nil
}

type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.n += int64(n)
	return n, err
}

func (s *ociStore) putVersion(ctx context.Context, dir string, m *bundle.Manifest, st *Store, res *PublishResult) error {
	if !isHexID(m.BundleID) {
		return fmt.Errorf("invalid bundle id %q", m.BundleID)
	}
	tmpDir, err := os.MkdirTemp("", "kbc-oci-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmpDir)
	layers, manifest, err := manifestFor(dir, m, tmpDir)
	if err != nil {
		return err
	}
	if ok, err := s.complete(ctx, m.BundleID); err != nil {
		return err
	} else if ok {
		res.Skipped = len(layers) + 2
		return nil
	}
	n := 0
	push := func(desc ocispec.Descriptor, open func() (io.ReadCloser, error), what string) error {
		ok, err := s.repo.Exists(ctx, desc)
		if err != nil {
			return fmt.Errorf("%s: %w", what, err)
		}
		if ok {
			res.Skipped++
			return nil
		}
		r, err := open()
		if err != nil {
			return err
		}
		defer r.Close()
		if err := s.repo.Push(ctx, desc, r); err != nil && !errors.Is(err, errdef.ErrAlreadyExists) {
			return fmt.Errorf("uploading %s: %w", what, err)
		}
		res.Uploaded++
		res.UploadedBytes += desc.Size
		n++
		if st.afterObject != nil {
			st.afterObject(n)
		}
		return nil
	}
	for _, l := range layers {
		if err := push(l.desc, func() (io.ReadCloser, error) { return os.Open(l.path) }, l.desc.Annotations[ocispec.AnnotationTitle]); err != nil {
			return err
		}
	}
	if err := push(ocispec.DescriptorEmptyJSON, func() (io.ReadCloser, error) {
		return io.NopCloser(bytes.NewReader(ocispec.DescriptorEmptyJSON.Data)), nil
	}, "config"); err != nil {
		return err
	}
	desc := content.NewDescriptorFromBytes(ocispec.MediaTypeImageManifest, manifest)
	if err := s.repo.PushReference(ctx, desc, bytes.NewReader(manifest), versionTagPrefix+m.BundleID); err != nil {
		return fmt.Errorf("uploading the manifest: %w", err)
	}
	res.Uploaded++
	res.UploadedBytes += desc.Size
	return nil
}

// fetchManifest fetches and checks the image manifest reference names.
func (s *ociStore) fetchManifest(ctx context.Context, reference string) (ocispec.Descriptor, *ocispec.Manifest, error) {
	desc, rc, err := s.repo.FetchReference(ctx, reference)
	if notFound(err) {
		return desc, nil, fmt.Errorf("%s: %w", reference, ErrNotFound)
	}
	if err != nil {
		return desc, nil, err
	}
	defer rc.Close()
	data, err := content.ReadAll(rc, desc) // checks size and digest
	if err != nil {
		return desc, nil, fmt.Errorf("manifest of %s: %w", reference, err)
	}
	var man ocispec.Manifest
	if err := json.Unmarshal(data, &man); err != nil {
		return desc, nil, fmt.Errorf("manifest of %s: %w", reference, err)
	}
	if man.ArtifactType != ArtifactType || !isHexID(man.Annotations[AnnotationBundleID]) {
		return desc, nil, fmt.Errorf("%s is not a kbc bundle (artifact type %q)", reference, man.ArtifactType)
	}
	return desc, &man, nil
}

func (s *ociStore) getVersion(ctx context.Context, id, tmp string) error {
	_, man, err := s.fetchManifest(ctx, versionTagPrefix+id)
	if err != nil {
		return err
	}
	// manifest.json first, bounded, so that its sizes bound the rest: a
	// layer's descriptor comes from the registry and may claim anything.
	i := slices.IndexFunc(man.Layers, func(l ocispec.Descriptor) bool {
		return l.Annotations[ocispec.AnnotationTitle] == bundle.ManifestFile
	})
	if i < 0 {
		return fmt.Errorf("%s: %w in the version", bundle.ManifestFile, ErrNotFound)
	}
	if man.Layers[i].Size > bundle.MaxManifestSize {
		return fmt.Errorf("%s: larger than %d bytes", bundle.ManifestFile, bundle.MaxManifestSize)
	}
	if err := s.fetchLayer(ctx, man.Layers[i], tmp); err != nil {
		return fmt.Errorf("%s: %w", bundle.ManifestFile, err)
	}
	m, err := bundle.ReadManifest(tmp)
	if err != nil {
		return err
	}
	for j, l := range man.Layers {
		if j == i {
			continue
		}
		title := l.Annotations[ocispec.AnnotationTitle]
		if limit := layerLimit(m, l); l.Size > limit {
			return fmt.Errorf("%s: layer of %d bytes, more than the %d the manifest allows", title, l.Size, limit)
		}
		if err := s.fetchLayer(ctx, l, tmp); err != nil {
			return fmt.Errorf("%s: %w", title, err)
		}
	}
	return nil
}

// layerLimit is the most bytes the layer l of the bundle m may hold: a
// file's listed size, or for the index tar the listed sizes of its files
// rounded up to tar's 512-byte blocks, plus a header per file and folder
// and the end-of-archive blocks and padding (POSIX pax/ustar format; tar
// pads to 10240 bytes). Without sizes (an older bundle), maxUnsizedFile.
func layerLimit(m *bundle.Manifest, l ocispec.Descriptor) int64 {
	if len(m.Sizes) == 0 {
		return maxUnsizedFile
	}
	title := l.Annotations[ocispec.AnnotationTitle]
	if l.MediaType != MediaTypeIndex {
		return m.Sizes[title] // 0 for a file not listed: Verify names it
	}
	var n int64 = 2*512 + 10240
	for name, size := range m.Sizes {
		if strings.HasPrefix(name, bundle.IndexDir+"/") {
			// a header (and room for a pax one), the data, a header per folder
			n += 3*512 + (size+511)/512*512 + int64(strings.Count(name, "/"))*512
		}
	}
	return n + 512 // the index folder itself
}

// fetchLayer downloads one layer into tmp, checking its digest: a file
// layer becomes the file its title names, the index layer is unpacked.
func (s *ociStore) fetchLayer(ctx context.Context, l ocispec.Descriptor, tmp string) error {
	title := l.Annotations[ocispec.AnnotationTitle]
	rc, err := s.repo.Fetch(ctx, l)
	if err != nil {
		return err
	}
	defer rc.Close()
	vr := content.NewVerifyReader(rc, l)
	switch l.MediaType {
	case MediaTypeIndex:
		if title != bundle.IndexDir+"/" {
			return fmt.Errorf("index layer titled %q", title)
		}
		err = readTar(vr, tmp, bundle.IndexDir)
		if err == nil {
			_, err = io.Copy(io.Discard, vr) // tar's end padding
		}
	case MediaTypeFile:
		if !validFilePath(title) {
			return fmt.Errorf("layer title %q is not a bundle file path", title)
		}
		p := filepath.Join(tmp, filepath.FromSlash(title))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return err
		}
		f, err := os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		if err != nil {
			return err
		}
		_, err = io.Copy(f, vr)
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			return err
		}
	default:
		return fmt.Errorf("unknown layer media type %q", l.MediaType)
	}
	if err != nil {
		return err
	}
	if err := vr.Verify(); err != nil {
		return fmt.Errorf("the registry sent bytes that do not match the layer digest: %w", err)
	}
	return nil
}

func (s *ociStore) tags(ctx context.Context) ([]string, error) {
	var out []string
	err := s.repo.Tags(ctx, "", func(tags []string) error {
		out = append(out, tags...)
		return nil
	})
	if notFound(err) {
		return nil, nil // no repository yet
	}
	return out, err
}

// exists asks for the repository's tags: a registry answers "name
// unknown" for a repository nothing was pushed to.
func (s *ociStore) exists(ctx context.Context) error {
	err := s.repo.Tags(ctx, "", func([]string) error { return nil })
	var re *errcode.ErrorResponse
	if notFound(err) || errors.As(err, &re) && re.StatusCode == http.StatusNotFound {
		return ErrNoStore
	}
	return err
}

func (s *ociStore) versions(ctx context.Context) ([]Version, error) {
	tags, err := s.tags(ctx)
	if err != nil {
		return nil, err
	}
	var out []Version
	for _, tag := range tags {
		id, ok := strings.CutPrefix(tag, versionTagPrefix)
		if !ok || !isHexID(id) {
			continue
		}
		_, man, err := s.fetchManifest(ctx, tag)
		if err != nil {
			return nil, err
		}
		v := Version{ID: id, Complete: true, SourceCommit: man.Annotations[ocispec.AnnotationRevision]}
		v.BuiltAt, _ = time.Parse(time.RFC3339, man.Annotations[ocispec.AnnotationCreated])
		for _, l := range man.Layers {
			if l.Annotations[ocispec.AnnotationTitle] == bundle.ManifestFile && l.Size < 1<<20 {
				rc, err := s.repo.Fetch(ctx, l)
				if err != nil {
					return nil, err
				}
				data, err := content.ReadAll(rc, l)
				rc.Close()
				var m bundle.Manifest
				if err == nil && json.Unmarshal(data, &m) == nil {
					v.Counts = m.Counts
				}
			}
		}
		out = append(out, v)
	}
	return out, nil
}

func (s *ociStore) deleteVersion(ctx context.Context, id string) error {
	desc, err := s.repo.Resolve(ctx, versionTagPrefix+id)
	if err != nil {
		return err
	}
	// Deletes the manifest (and so every tag on it); the registry's
	// garbage collector reclaims blobs no manifest names.
	return s.repo.Delete(ctx, desc)
}

func (s *ociStore) pointer(ctx context.Context, name string) (Pointer, string, error) {
	desc, man, err := s.fetchManifest(ctx, name)
	if err != nil {
		return Pointer{}, "", fmt.Errorf("pointer %w", err)
	}
	p := Pointer{Name: name, BundleID: man.Annotations[AnnotationBundleID], SourceCommit: man.Annotations[ocispec.AnnotationRevision]}
	p.BuiltAt, _ = time.Parse(time.RFC3339, man.Annotations[ocispec.AnnotationCreated])
	return p, desc.Digest.String(), nil
}

// setPointer tags the version's manifest with p.Name if the tag still
// names rev. The OCI distribution API has no conditional tag update, so
// this is check-then-write: it catches a move made while we uploaded, but
// not one in the last round trip before the tag is written, nor a tag moved
// away and back again in between. See the package doc.
func (s *ociStore) setPointer(ctx context.Context, p Pointer, rev string) (Pointer, error) {
	desc, err := s.repo.Resolve(ctx, versionTagPrefix+p.BundleID)
	if err != nil {
		return Pointer{}, err
	}
	cur, err := s.repo.Resolve(ctx, p.Name)
	switch {
	case notFound(err):
		if rev != "" {
			return Pointer{}, fmt.Errorf("%w: it was removed by someone else since it was read", ErrConflict)
		}
	case err != nil:
		return Pointer{}, err
	case cur.Digest.String() != rev:
		return Pointer{}, fmt.Errorf("%w: another publisher moved it to manifest %s since it was read; nothing was overwritten: run again to move it", ErrConflict, cur.Digest)
	}
	if err := s.repo.Tag(ctx, desc, p.Name); err != nil {
		return Pointer{}, err
	}
	p.PublishedAt = time.Time{} // a tag carries no time of its own
	return p, nil
}

func (s *ociStore) pointerNames(ctx context.Context) ([]string, error) {
	tags, err := s.tags(ctx)
	if err != nil {
		return nil, err
	}
	return slices.DeleteFunc(tags, func(tag string) bool { return strings.HasPrefix(tag, versionTagPrefix) }), nil
}
