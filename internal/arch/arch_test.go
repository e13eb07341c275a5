package arch

import (
	"go/parser"
	"go/token"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
)

const module = "github.com/allotproject/allot/"

// root is the repository root, two folders up.
const root = "../.."

// packageMap reads the table in DEVELOPERS.md: package → allowed imports.
func packageMap(t *testing.T) map[string]map[string]bool {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(root, "DEVELOPERS.md"))
	if err != nil {
		t.Fatal(err)
	}
	row := regexp.MustCompile("^\\| `([a-z/]+)` \\|.*\\| (.*) \\|$")
	code := regexp.MustCompile("`([a-z/]+)`")
	m := map[string]map[string]bool{}
	for _, line := range strings.Split(string(b), "\n") {
		g := row.FindStringSubmatch(line)
		if g == nil {
			continue
		}
		if _, dup := m[g[1]]; dup {
			t.Errorf("DEVELOPERS.md: package %s has two rows", g[1])
		}
		allowed := map[string]bool{}
		for _, c := range code.FindAllStringSubmatch(g[2], -1) {
			allowed[c[1]] = true
		}
		m[g[1]] = allowed
	}
	if len(m) < 10 {
		t.Fatalf("DEVELOPERS.md: only %d package rows found", len(m))
	}
	return m
}

// sourceImports lists, per package folder, the allot packages its non-test
// files import.
func sourceImports(t *testing.T) map[string]map[string]bool {
	t.Helper()
	out := map[string]map[string]bool{}
	fset := token.NewFileSet()
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		name := d.Name()
		if d.IsDir() {
			if path != root && (strings.HasPrefix(name, ".") || name == "testdata" || name == "docs" || name == "schema" || name == "scripts") {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(name, ".go") || strings.HasSuffix(name, "_test.go") {
			return nil
		}
		rel, _ := filepath.Rel(root, filepath.Dir(path))
		pkg := filepath.ToSlash(rel)
		if out[pkg] == nil {
			out[pkg] = map[string]bool{}
		}
		f, err := parser.ParseFile(fset, path, nil, parser.ImportsOnly)
		if err != nil {
			return err
		}
		for _, im := range f.Imports {
			p := strings.Trim(im.Path.Value, `"`)
			if strings.HasPrefix(p, module) {
				out[pkg][strings.TrimPrefix(p, module)] = true
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func TestPackageMap(t *testing.T) {
	table, src := packageMap(t), sourceImports(t)
	var pkgs []string
	for p := range src {
		pkgs = append(pkgs, p)
	}
	sort.Strings(pkgs)
	for _, p := range pkgs {
		allowed, ok := table[p]
		if !ok {
			t.Errorf("package %s has no row in DEVELOPERS.md's package map", p)
			continue
		}
		for im := range src[p] {
			if !allowed[im] {
				t.Errorf("%s imports %s, which DEVELOPERS.md does not allow; move the code or change the map (and say why)", p, im)
			}
		}
	}
	for p := range table {
		if _, ok := src[p]; !ok {
			t.Errorf("DEVELOPERS.md lists %s, which does not exist", p)
		}
	}
}

// TestOnlyWorkbookImportsExcelize keeps the workbook format in one place.
func TestOnlyWorkbookImportsExcelize(t *testing.T) {
	fset := token.NewFileSet()
	filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() || !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return err
		}
		f, err := parser.ParseFile(fset, path, nil, parser.ImportsOnly)
		if err != nil {
			return err
		}
		for _, im := range f.Imports {
			if strings.Contains(im.Path.Value, "excelize") && filepath.ToSlash(filepath.Dir(path)) != root+"/design/workbook" {
				t.Errorf("%s imports excelize; only design/workbook may", path)
			}
		}
		return nil
	})
}
