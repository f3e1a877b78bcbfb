package queries_test

import (
	"go/ast"
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/queries"
)

// TestEveryStatementIsUsed fails on a named statement that no non-test Go
// file of the module names: a dead statement is removed, not kept. A
// statement is named by a string literal equal to its name, or by a literal
// prefix ending in "_" that code completes by concatenation ("dup_" + test).
func TestEveryStatementIsUsed(t *testing.T) {
	literals := map[string]bool{} // every string literal
	prefixes := map[string]bool{} // literals ending in "_" that code concatenates with more
	root := ".."
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if path != root && (strings.HasPrefix(d.Name(), ".") || d.Name() == "testdata" || d.Name() == "queries") {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(token.NewFileSet(), path, nil, parser.SkipObjectResolution)
		if err != nil {
			return err
		}
		ast.Inspect(f, func(n ast.Node) bool {
			switch n := n.(type) {
			case *ast.BasicLit:
				if s, ok := stringLit(n); ok {
					literals[s] = true
				}
			case *ast.BinaryExpr:
				if s, ok := stringLit(n.X); ok && n.Op == token.ADD && strings.HasSuffix(s, "_") {
					prefixes[s] = true
				}
			}
			return true
		})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(literals) < 100 {
		t.Fatalf("only %d string literals found under %s: is the walk looking at the module?", len(literals), root)
	}
	for _, name := range queries.Names() {
		used := literals[name]
		for i := strings.IndexByte(name, '_'); !used && i > 0; i = nextUnderscore(name, i) {
			used = prefixes[name[:i+1]]
		}
		if !used {
			t.Errorf("statement %q is used by no Go code outside tests: remove it", name)
		}
	}
}

func nextUnderscore(s string, i int) int {
	j := strings.IndexByte(s[i+1:], '_')
	if j < 0 {
		return -1
	}
	return i + 1 + j
}

func stringLit(e ast.Expr) (string, bool) {
	lit, ok := e.(*ast.BasicLit)
	if !ok || lit.Kind != token.STRING {
		return "", false
	}
	s, err := strconv.Unquote(lit.Value)
	return s, err == nil
}
