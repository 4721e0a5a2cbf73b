package format

import (
	"go/ast"
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// layoutNames returns the exported constants declared in layout.go: the
// magic, the version, the section kinds, the column encodings and the
// flags, the identifiers that name how the bytes are laid out.
func layoutNames(t *testing.T) []string {
	f, err := parser.ParseFile(token.NewFileSet(), "layout.go", nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, d := range f.Decls {
		g, ok := d.(*ast.GenDecl)
		if !ok || g.Tok != token.CONST {
			continue
		}
		for _, s := range g.Specs {
			for _, n := range s.(*ast.ValueSpec).Names {
				if n.IsExported() {
					names = append(names, n.Name)
				}
			}
		}
	}
	return names
}

// One owner of the bytes: outside format/ and spec/, no package's code
// (tests, which damage chosen bytes on purpose, aside) names a layout
// constant of format (a section kind, an encoding, the magic, a flag), so
// that a change to the layout touches only format/ and spec/. Section
// kinds and encodings reach the tools only as values of the directory
// (Model.Sections) with their names.
func TestOnlyFormatNamesTheLayout(t *testing.T) {
	names := layoutNames(t)
	for _, must := range []string{"Magic", "KindProbabilities", "KindWordHash", "EliasFanoRanks", "Packed", "FlagSuffixClosed"} {
		if !slices.Contains(names, must) {
			t.Fatalf("layout.go declares %v, not %s: the list is read wrong", names, must)
		}
	}
	root := ".."
	fset := token.NewFileSet()
	files := 0
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(root, path)
		if d.IsDir() {
			if rel != "." && (rel == "format" || rel == "spec" || strings.HasPrefix(d.Name(), ".") || d.Name() == "testdata") {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(fset, path, nil, parser.SkipObjectResolution)
		if err != nil {
			return err
		}
		files++
		local := ""
		for _, imp := range f.Imports {
			if p, _ := strconv.Unquote(imp.Path.Value); p == "ingot/format" {
				local = "format"
				if imp.Name != nil {
					local = imp.Name.Name
				}
			}
		}
		if local == "" {
			return nil
		}
		ast.Inspect(f, func(n ast.Node) bool {
			sel, ok := n.(*ast.SelectorExpr)
			if !ok {
				return true
			}
			if x, ok := sel.X.(*ast.Ident); ok && x.Name == local && slices.Contains(names, sel.Sel.Name) {
				t.Errorf("%s: names format.%s, a layout constant: only format/ and spec/ may", fset.Position(sel.Pos()), sel.Sel.Name)
			}
			return true
		})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if files < 50 {
		t.Fatalf("only %d Go files outside format/ and spec/ read: the walk is wrong", files)
	}
}
