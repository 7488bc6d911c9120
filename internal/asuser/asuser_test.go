package asuser

import (
	"os"
	"testing"
)

func TestSelf(t *testing.T) {
	t.Run("a b/c", func(t *testing.T) {
		if got, want := Self(t), `^TestSelf$/^a_b$/^c$`; got != want {
			t.Errorf("Self = %q, want %q", got, want)
		}
	})
}

// Run by Run, this test is not root and finds the file it named.
func TestRunsAsNobody(t *testing.T) {
	if Root() {
		Run(t, Self(t), []string{"testdata/secret.txt"})
		return
	}
	if os.Getenv("KBC_ASUSER") != "1" {
		t.Skip("not root, and not run by Run")
	}
	if os.Geteuid() == 0 || os.Getegid() == 0 {
		t.Errorf("run by Run as uid %d, gid %d", os.Geteuid(), os.Getegid())
	}
	if data, err := os.ReadFile("testdata/secret.txt"); err != nil || string(data) != "copied\n" {
		t.Errorf("the named test file was not copied: %q %v", data, err)
	}
}
