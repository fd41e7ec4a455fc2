package gis

import (
	"go/parser"
	"go/token"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// DESIGN.md (packages): gis may import hydraulics and the geometry and index
// libraries, never scoring. This checks the non-test files' imports.
func TestImports(t *testing.T) {
	allowed := map[string]bool{
		"headroom/hydraulics":             true,
		"github.com/paulmach/orb":         true,
		"github.com/paulmach/orb/geojson": true,
		"github.com/paulmach/orb/planar":  true,
		"github.com/tidwall/rtree":        true,
	}
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	fset := token.NewFileSet()
	for _, name := range files {
		if strings.HasSuffix(name, "_test.go") {
			continue
		}
		src, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		f, err := parser.ParseFile(fset, name, src, parser.ImportsOnly)
		if err != nil {
			t.Fatal(err)
		}
		for _, imp := range f.Imports {
			path, _ := strconv.Unquote(imp.Path.Value)
			if strings.Contains(path, ".") || strings.HasPrefix(path, "headroom/") {
				if !allowed[path] {
					t.Errorf("%s imports %s", name, path)
				}
			}
		}
	}
}
