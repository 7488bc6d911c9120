package pgsync_test

import (
	"context"
	"fmt"
	"log"
	"os"

	"github.com/kbc-project/kbc/bundle/pgsync"
)

// Sync a bundle into the database named by DATABASE_URL (or, when empty,
// by the PG* variables), embedding new texts with a command of one's own.
func ExampleSync() {
	res, err := pgsync.Sync(context.Background(), "out", os.Getenv("DATABASE_URL"), pgsync.Options{
		EmbedCmd: "python3 embed.py --model small",
	})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%s: %d added, %d changed, %d removed, %d embedded\n", res.Mode, res.Added, res.Changed, res.Removed, res.Embedded)
}
