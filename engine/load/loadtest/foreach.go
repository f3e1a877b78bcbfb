package loadtest

import "testing"

// ForEach runs body as a parallel subtest for every case, with the case's
// input file at path (generated inputs are written to a temporary folder).
// Heavy cases are skipped with -short.
func ForEach(t *testing.T, body func(t *testing.T, c Case, path string)) {
	cases, err := Cases()
	if err != nil {
		t.Fatal(err)
	}
	gen := t.TempDir()
	for _, c := range cases {
		t.Run(c.Name, func(t *testing.T) {
			t.Parallel()
			if c.Heavy && testing.Short() {
				t.Skip("a large generated input; skipped with -short")
			}
			path, err := c.Materialize(gen)
			if err != nil {
				t.Fatal(err)
			}
			body(t, c, path)
		})
	}
}
