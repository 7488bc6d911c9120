package bpe

import (
	"encoding/binary"
	"fmt"
)

// Encode lays tokens out as a table that Parse reads, each token's rank
// being its index in tokens. Tokens must be distinct and not empty.
func Encode(tokens []string) ([]byte, error) {
	n := len(tokens)
	bits := uint32(1)
	for 1<<bits < 2*n { // at most half full: short probes
		bits++
	}
	slots := make([]uint32, 1<<bits)
	mask := uint32(1)<<bits - 1
	size := 0
	for i, t := range tokens {
		if t == "" {
			return nil, fmt.Errorf("token %d is empty", i)
		}
		s := fnv1a(t) & mask
		for ; slots[s] != 0; s = (s + 1) & mask {
			if tokens[slots[s]-1] == t {
				return nil, fmt.Errorf("tokens %d and %d are both %q", slots[s]-1, i, t)
			}
		}
		slots[s] = uint32(i + 1)
		size += len(t)
	}
	out := make([]byte, 0, len(magic)+8+4*(n+1+len(slots))+size)
	le := binary.LittleEndian
	out = append(out, magic...)
	out = le.AppendUint32(out, uint32(n))
	out = le.AppendUint32(out, bits)
	off := uint32(0)
	for _, t := range tokens {
		out = le.AppendUint32(out, off)
		off += uint32(len(t))
	}
	out = le.AppendUint32(out, off)
	for _, s := range slots {
		out = le.AppendUint32(out, s)
	}
	for _, t := range tokens {
		out = append(out, t...)
	}
	return out, nil
}

// Parse reads a table that Encode wrote. It copies nothing: data must not
// change while the Ranks are in use.
func Parse(data string) (*Ranks, error) { return parse(data) }
