package watch

import "strings"

// tempSuffixes are name endings that editors give to temporary, swap and
// backup files. Sources, all from memory of the editors' behaviour (no spec
// exists):
//   - "~": backup file of vim ('backupext' default) and Emacs.
//   - ".swp", ".swx": vim swap files (".swx" is the probe vim writes to test
//     whether a swap file can be created); usually also hidden.
//   - ".tmp": common practice for temporary files written before a rename.
//   - "___jb_tmp___", "___jb_old___": JetBrains IDEs' "safe write" writes the
//     new content to NAME___jb_tmp___, renames NAME to NAME___jb_old___,
//     renames the temporary file to NAME and deletes the old one.
var tempSuffixes = [...]string{"~", ".swp", ".swx", ".tmp", "___jb_tmp___", "___jb_old___"}

// skipName reports whether a file or folder name is hidden or belongs to an
// editor's temporary files, so that it is neither watched nor reported.
func skipName(name string) bool {
	if name == "" {
		return false
	}
	// Hidden, which also covers Emacs lock links ".#NAME" and vim's swap
	// files ".NAME.swp".
	if name[0] == '.' {
		return true
	}
	// vim writes and deletes a file named "4913" to test whether it may
	// create files in the folder (from memory of vim's bufwrite.c; the
	// number is fixed and grows only if such a file already exists).
	if name == "4913" {
		return true
	}
	// Emacs auto-save files are "#NAME#" (Emacs manual, Auto Save Files).
	if len(name) >= 2 && name[0] == '#' && name[len(name)-1] == '#' {
		return true
	}
	for _, s := range tempSuffixes {
		if strings.HasSuffix(name, s) {
			return true
		}
	}
	return false
}
