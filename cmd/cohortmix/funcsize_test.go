package main

import (
	"go/ast"
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"strings"
	"testing"
)

// Functions a reader can hold: at most maxLines lines and a branch complexity of maxBranches
// (1 + each if, for, range, case and && or ||), in every non-test file. A function over either
// is cut along the steps it already has.
const maxLines, maxBranches = 80, 25

func TestFunctionsStayShort(t *testing.T) {
	t.Parallel()
	root := filepath.Join("..", "..")
	fset := token.NewFileSet()
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() || !strings.HasSuffix(p, ".go") || strings.HasSuffix(p, "_test.go") {
			return err
		}
		f, err := parser.ParseFile(fset, p, nil, 0)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		for _, decl := range f.Decls {
			fd, ok := decl.(*ast.FuncDecl)
			if !ok || fd.Body == nil {
				continue
			}
			lines := fset.Position(fd.End()).Line - fset.Position(fd.Pos()).Line + 1
			if key := filepath.ToSlash(rel) + ":" + fd.Name.Name; lines > maxLines || branches(fd) > maxBranches {
				t.Errorf("%s: %d lines, branch complexity %d (at most %d and %d): cut it along its steps", key, lines, branches(fd), maxLines, maxBranches)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// branches is 1 plus the function's branch points: if, for, range, each case with a list or
// communication, and each && and ||.
func branches(fn *ast.FuncDecl) int {
	c := 1
	ast.Inspect(fn, func(n ast.Node) bool {
		switch n := n.(type) {
		case *ast.IfStmt, *ast.ForStmt, *ast.RangeStmt:
			c++
		case *ast.CaseClause:
			if n.List != nil {
				c++
			}
		case *ast.CommClause:
			if n.Comm != nil {
				c++
			}
		case *ast.BinaryExpr:
			if n.Op == token.LAND || n.Op == token.LOR {
				c++
			}
		}
		return true
	})
	return c
}
