// Package packs holds leadline's example packs, embedded so that the
// demo and `leadline pack init` can write them out.
package packs

import "embed"

//go:embed *.toml
var files embed.FS

// Example returns the commented example pack (example.toml).
func Example() []byte {
	b, err := files.ReadFile("example.toml")
	if err != nil {
		panic(err)
	}
	return b
}
