// Package watch turns file events under a source folder into debounced,
// coalesced rebuild requests.
//
// A [Watcher] watches every folder of a tree (new folders included as they
// appear) and calls a rebuild function with the set of paths that changed
// since the last call. It knows nothing about documents or bundles: the
// caller (cmd/kbc) hands it a function that re-reads only what changed.
//
// # Events and what becomes of them
//
// Every path in a [Change] is a slash-separated path relative to the root.
// A path may name a file or a folder that now exists or no longer does, so
// the rebuild should look at each one:
//
//   - missing: drop it and everything below it (a deleted file, a deleted
//     folder, a folder moved out of the tree, the old name of a rename);
//   - a regular file: re-read it;
//   - a folder: re-read everything below it (rare: the files of a new
//     folder are listed one by one; see below).
//
// Editors save in several ways and all of them end up as the target's path:
// writing in place, writing a temporary file and renaming it over the target
// (vim with backupcopy=no, JetBrains "safe write", VS Code and many others),
// renaming the target to a backup and writing a new one (vim's default), and
// deleting and re-creating the file. The temporary and backup names are
// ignored (see below), so only the target is reported.
//
// A folder that appears (mkdir, or moved in from outside the tree) is walked
// at once: a watch is added to each of its folders before that folder is
// listed, and every file found is reported. Files written into the folder
// before its watch existed are therefore not lost.
//
// A chmod alone (IN_ATTRIB on Linux: touch, chmod, chown, a link count
// change) does not change content and is not reported, with one exception:
// when a chmod-only event finds a file unreadable, the watcher remembers it,
// and when a later chmod-only event finds it readable again it is reported,
// because the last rebuild could not read it. Likewise a folder that could
// not be watched (no permission) is walked and reported when a chmod makes it
// watchable. A file that was already unreadable when watching began is only
// picked up by its next write.
//
// # Ignored paths
//
// Hidden files and folders (name starts with '.'), editor temporary and
// backup files (see the list in ignore.go) and whatever [Options].Ignore
// says are never reported and ignored folders are never watched. The
// caller's output and cache folders belong in Options.Ignore when they lie
// inside the tree.
//
// # Timing
//
// A rebuild starts once no event has arrived for [Options].Debounce (150 ms
// by default), or at the latest 2 s (or ten debounce periods, whichever is
// longer) after the first pending event, so that a file written to without
// pause cannot hold rebuilds off for ever. Events that arrive while a
// rebuild runs are collected and handed to the next one; two rebuilds never
// run at once.
//
// Create the Watcher before the initial full build and call [Watcher.Run]
// after it: edits made during the initial build are queued by the kernel and
// arrive as the first Change.
//
// # Limits (Linux)
//
// inotify needs one watch per folder; the number per user is capped by the
// sysctl fs.inotify.max_user_watches, and the number of watchers by
// fs.inotify.max_user_instances. Reaching either gives an error naming the
// setting and how to raise it. When the kernel's event queue overflows
// (fs.inotify.max_queued_events), events are lost: the watcher re-walks the
// tree and sets [Change].All so that the rebuild re-reads everything.
//
// # Concurrency
//
// [Watcher.Run] runs the event loop in the calling goroutine, which owns all
// state; the rebuild runs on one worker goroutine, one call at a time.
// [Watcher.Close] may be called from any goroutine, any number of times; it
// stops Run and waits for it.
package watch
