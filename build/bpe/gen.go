//go:build ignore

// gen writes cl100k_base.bin, the rank table of package bpe, from the
// cl100k_base vocabulary of github.com/tiktoken-go/tokenizer: token i is
// what the library decodes id i to, and its rank is i.
//
//	go generate ./build/bpe
package main

import (
	"log"
	"os"

	"github.com/kbc-project/kbc/build/bpe"
	"github.com/tiktoken-go/tokenizer"
)

func main() {
	lib, err := tokenizer.Get(tokenizer.Cl100kBase)
	if err != nil {
		log.Fatal(err)
	}
	// cl100k_base's ordinary tokens are ids 0 to 100255; its special
	// tokens (<|endoftext|> and others) come after and are left out.
	var tokens []string
	for id := uint(0); id < 100256; id++ {
		t, err := lib.Decode([]uint{id})
		if err != nil || t == "" {
			log.Fatalf("id %d: %q %v", id, t, err)
		}
		tokens = append(tokens, t)
	}
	data, err := bpe.Encode(tokens)
	if err != nil {
		log.Fatal(err)
	}
	if err := os.WriteFile("cl100k_base.bin", data, 0o644); err != nil {
		log.Fatal(err)
	}
}
