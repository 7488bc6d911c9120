//go:build tools

// Package tools records the programs this module pins; see go.mod.
package tools

import _ "github.com/versity/versitygw/cmd/versitygw"
