// Package store publishes kbc bundles to a store and pulls them back: a
// folder, an S3-compatible bucket or an OCI registry.
//
// # Versions and pointers
//
// A version is one bundle, named by its bundle id (the SHA-256 of its
// passages.jsonl), so publishing the same bundle twice stores it once. A
// pointer is a name for a version: "latest", and any tag given to Publish.
// Publish uploads the version completely first and only then moves the
// pointers, so a reader that follows a pointer never finds half a version;
// Pull downloads into a folder of its own, checks every byte against the
// manifest with bundle.Verify, and swaps the result into place with
// bundle.Install.
//
// # Blob stores: folder, file:// and s3://
//
// Folders and S3 buckets go through gocloud.dev/blob (fileblob and s3blob),
// with this layout under the location's prefix:
//
//	versions/<bundle id>/files/<bundle file>   every file, manifest.json too
//	versions/<bundle id>/complete              JSON marker, written last
//	pointers/<name>/<revision>.json            one object per move of a pointer
//
// Every object of a version is written only when it is missing; an object
// that exists is taken as is (objects are whole once visible: S3 PUTs are
// atomic and fileblob renames a finished temporary file), and Pull checks
// all bytes anyway. A version without its complete marker is incomplete:
// Versions shows it, Pull refuses it, Prune leaves it, and publishing the
// same bundle again uploads what is missing and writes the marker.
//
// A pointer is a sequence of revisions, numbered 1, 2, ... and zero-padded
// to 20 digits; its value is the highest. Moving it is a compare-and-swap on
// the revision number: the mover reads revision N and creates N+1 with a
// create-only write, which fails if anyone else created N+1 first. The
// revision number, not the content, decides, so a concurrent move that wrote
// the very same bytes is still caught. The create-only write is, in S3, a
// PUT with "If-None-Match: *" (gocloud's WriterOptions.IfNotExist; AWS S3
// has honoured it since August 2024 and versitygw v1.8.0 does too, its posix
// backend checks the condition under a lock); in a folder it is link(2) of
// a finished temporary file to the revision's name, which fails with EEXIST
// if the name exists, atomically between processes (fileblob's own
// IfNotExist is a stat then a rename, safe only within one process, so it is
// not used for this). Each revision records the bundle id, source commit and
// build time from the bundle's manifest, the time of the move, and the id
// the pointer named before.
//
// # OCI registries: oci://
//
// A version is an OCI image manifest (image-spec v1.1) with artifactType
// ArtifactType and an empty config: one layer per bundle file (MediaTypeFile,
// titled with the file's path by org.opencontainers.image.title) and the
// index/ folder as one tar layer (MediaTypeIndex; entries sorted, times,
// owners and groups zero, modes 0644 and 0755), layers sorted by title. The
// manifest's annotations hold the bundle id (AnnotationBundleID), the source
// commit (org.opencontainers.image.revision) and the build time
// (org.opencontainers.image.created), all from the bundle's manifest and
// never from the clock, so the same bundle always gives the same manifest
// digest. Layers are pushed only when the registry lacks them, and a version
// already tagged is not pushed at all. The version is tagged
// "bundle-<bundle id>"; a registry accepts a manifest only when every blob
// it names is stored, so a tagged version is complete.
//
// Pointers are tags. The OCI distribution API has no conditional tag update,
// so moving a pointer is check-then-write: the tag's digest is read before
// the upload and again just before tagging, and a change is reported as
// ErrConflict. That catches a publisher that finished while this one
// uploaded, but not one that tags within the last round trip, nor a tag
// moved away and back in between. Prune deletes manifests; the registry's
// garbage collector reclaims their blobs.
//
// # Credentials
//
// S3 credentials come from the AWS SDK's default chain (AWS_ACCESS_KEY_ID,
// AWS_SECRET_ACCESS_KEY, AWS_SESSION_TOKEN, AWS_PROFILE, ~/.aws/credentials
// and ~/.aws/config); registry credentials from the Docker configuration
// (~/.docker/config.json or $DOCKER_CONFIG, credential helpers included).
// Every error a Store returns, and Store.String, has those variables' values
// and any user information or secret-looking query value of the location
// replaced by "[redacted]": the user information of every URL as typed (also
// percent-encoded or nested in a query value) and secret-looking key=value
// pairs, found by Redact, which other commands use for their own locations.
//
// # Hostile stores
//
// Pull reads nothing unbounded: manifest.json up to bundle.MaxManifestSize,
// markers and pointer revisions up to 1 MiB, every other file up to the size
// its manifest lists (OCI layers are checked against those sizes before they
// are fetched). A folder store's objects are read only when they are regular
// files inside its folder. The bundle id names passages.jsonl only; the
// manifest's files digest names every file, and Ref.Digest pins it.
//
// # Concurrency
//
// A Store may be used from several goroutines, and several processes may
// publish to one store at once: they never overwrite each other's pointers
// unnoticed. Prune running while someone publishes a bundle it is removing
// can remove objects of that version; run Prune when nobody publishes.
package store
