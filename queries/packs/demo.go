package packs

// Demo returns the pack that `leadline demo` runs (demo.toml).
func Demo() []byte {
	b, err := files.ReadFile("demo.toml")
	if err != nil {
		panic(err)
	}
	return b
}
