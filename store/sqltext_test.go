package store_test

import (
	"fmt"
	"go/ast"
	"go/token"
	"go/types"
	"sort"
	"strings"
	"testing"

	"golang.org/x/tools/go/packages"
)

// sqlBuilders are the only functions allowed to pass SQL text that is not a constant to the
// database: each builds a WHERE clause or a paging query from constant fragments and numbered
// placeholders ($n or ?) and binds every value from outside as an argument. A new entry needs
// the same review; an entry no longer needed fails the test, so the list stays true.
var sqlBuilders = map[string]string{
	"ridgeflank/store/postgis.(*Store).ListGrids":   "filters joined from constant clauses; values bound as $n",
	"ridgeflank/store/postgis.(*Store).ListRegions": "filters (tags, bounding boxes, geometry) from constant clauses; values bound as $n",
	"ridgeflank/store/sqlite.(*Store).ListRegions":  "filters from constant clauses; values bound as ?",
}

// sqlSinks are the methods that send SQL text to a database (pgx and database/sql), and the
// stores' own helpers that pass their query parameter on to them (their callers are checked).
var sqlSinks = map[string]bool{
	"Exec": true, "Query": true, "QueryRow": true, "ExecContext": true, "QueryContext": true,
	"QueryRowContext": true, "Prepare": true, "PrepareContext": true, "Queue": true,
	"getByID": true, "listPage": true,
}

// No SQL is built from values by string concatenation or formatting (OWASP SQL Injection
// Prevention Cheat Sheet, option 1: parameterised queries). Every SQL text the stores send is a
// Go constant, an identifier quoted by pgx.Identifier.Sanitize, a constant repeated
// (strings.Repeat of placeholders), a parameter of the function that every caller in the
// package fills with such text (a table name, a query), or built in one of the reviewed
// sqlBuilders; joined only to each other. The check runs on the type-checked code of both stores and the test-database
// helper.
func TestSQLTextIsConstant(t *testing.T) {
	if testing.Short() {
		t.Skip("type-checks the stores (go list): not in -short")
	}
	cfg := &packages.Config{Mode: packages.NeedName | packages.NeedSyntax | packages.NeedTypes | packages.NeedTypesInfo, Tests: false}
	pkgs, err := packages.Load(cfg, "ridgeflank/store/sqlite", "ridgeflank/store/postgis", "ridgeflank/store/pgtest")
	if err != nil {
		t.Fatal(err)
	}
	if packages.PrintErrors(pkgs) > 0 {
		t.Fatal("the store packages do not type-check")
	}
	used := map[string]bool{}
	sites := 0
	type paramNeed struct {
		pkg   *packages.Package
		fn    types.Object
		index int
		at    string
	}
	var paramNeeds []paramNeed
	for _, pkg := range pkgs {
		info := pkg.TypesInfo
		for _, f := range pkg.Syntax {
			for _, decl := range f.Decls {
				fd, ok := decl.(*ast.FuncDecl)
				if !ok || fd.Body == nil {
					continue
				}
				fn := funcName(pkg.PkgPath, fd)
				params := paramIndex(info, fd)
				ast.Inspect(fd.Body, func(n ast.Node) bool {
					call, ok := n.(*ast.CallExpr)
					if !ok {
						return true
					}
					name := calleeName(call)
					if !sqlSinks[name] {
						return true
					}
					arg := firstStringArg(info, call)
					if arg == nil {
						return true
					}
					sites++
					var need []int
					if safeSQL(info, fd.Body, arg, 0, params, &need) {
						// the parameters it uses must be filled with SQL text by every caller
						fnObj := info.Defs[fd.Name]
						for _, i := range need {
							paramNeeds = append(paramNeeds, paramNeed{pkg, fnObj, i, pkg.Fset.Position(call.Pos()).String()})
						}
						return true
					}
					if _, ok := sqlBuilders[fn]; ok {
						used[fn] = true
						return true
					}
					t.Errorf("%s: %s sends SQL text built at run time to %s; bind values as placeholders (or review the function and add it to sqlBuilders)",
						pkg.Fset.Position(call.Pos()), fn, name)
					return true
				})
			}
		}
	}
	// Every call of a function whose parameter reaches SQL text passes such text there (or a
	// parameter of its own, whose callers are checked in turn).
	seen := map[string]bool{}
	for len(paramNeeds) > 0 {
		pn := paramNeeds[0]
		paramNeeds = paramNeeds[1:]
		key := fmt.Sprintf("%s#%d", pn.fn.(*types.Func).FullName(), pn.index)
		if seen[key] || sqlSinks[pn.fn.Name()] {
			continue // getByID, listPage: their calls are sink calls, checked above
		}
		seen[key] = true
		calls := 0
		for _, f := range pn.pkg.Syntax {
			for _, decl := range f.Decls {
				fd, ok := decl.(*ast.FuncDecl)
				if !ok || fd.Body == nil {
					continue
				}
				params := paramIndex(pn.pkg.TypesInfo, fd)
				ast.Inspect(fd.Body, func(n ast.Node) bool {
					call, ok := n.(*ast.CallExpr)
					if !ok || calleeObj(pn.pkg.TypesInfo, call) != pn.fn {
						return true
					}
					calls++
					var need []int
					if pn.index >= len(call.Args) || !safeSQL(pn.pkg.TypesInfo, fd.Body, call.Args[pn.index], 0, params, &need) {
						t.Errorf("%s: the call of %s passes SQL text built at run time (its parameter %d reaches the SQL at %s)",
							pn.pkg.Fset.Position(call.Pos()), pn.fn.Name(), pn.index, pn.at)
					}
					for _, i := range need {
						paramNeeds = append(paramNeeds, paramNeed{pn.pkg, pn.pkg.TypesInfo.Defs[fd.Name], i, pn.at})
					}
					return true
				})
			}
		}
		if calls == 0 {
			t.Errorf("%s: parameter %d of %s reaches SQL text but no call of it was found to check", pn.at, pn.index, pn.fn.Name())
		}
	}
	if sites < 50 {
		t.Fatalf("only %d SQL call sites found: the scan no longer sees the stores' queries", sites)
	}
	var stale []string
	for fn := range sqlBuilders {
		if !used[fn] {
			stale = append(stale, fn)
		}
	}
	sort.Strings(stale)
	for _, fn := range stale {
		t.Errorf("sqlBuilders names %s, which no longer builds SQL text: remove it", fn)
	}
	t.Logf("%d SQL call sites checked", sites)
}

// safeSQL reports whether e is SQL text made only of constants and quoted identifiers, looking
// through local variables assigned such text (depth-limited). A parameter of the function
// (params, nil for none allowed) is accepted and its index appended to need: its callers must
// pass such text.
func safeSQL(info *types.Info, body *ast.BlockStmt, e ast.Expr, depth int, params map[types.Object]int, need *[]int) bool {
	if tv, ok := info.Types[e]; ok && tv.Value != nil {
		return true // a constant expression
	}
	switch x := e.(type) {
	case *ast.ParenExpr:
		return safeSQL(info, body, x.X, depth, params, need)
	case *ast.BinaryExpr:
		return x.Op == token.ADD && safeSQL(info, body, x.X, depth, params, need) && safeSQL(info, body, x.Y, depth, params, need)
	case *ast.CallExpr:
		// pgx.Identifier{...}.Sanitize(): a quoted, escaped identifier
		if sel, ok := x.Fun.(*ast.SelectorExpr); ok && sel.Sel.Name == "Sanitize" {
			if tv, ok := info.Types[sel.X]; ok && strings.HasSuffix(tv.Type.String(), "pgx/v5.Identifier") {
				return true
			}
		}
		// strings.Repeat(constant, n): placeholders for a list of bound values
		if sel, ok := x.Fun.(*ast.SelectorExpr); ok && sel.Sel.Name == "Repeat" && len(x.Args) == 2 {
			if pk, ok := sel.X.(*ast.Ident); ok && pk.Name == "strings" {
				if tv, ok := info.Types[x.Args[0]]; ok && tv.Value != nil {
					return true
				}
			}
		}
	case *ast.Ident:
		obj := info.Uses[x]
		if i, ok := params[obj]; ok && need != nil {
			*need = append(*need, i)
			return true
		}
		v, ok := obj.(*types.Var)
		if !ok || depth > 3 || v.Parent() == nil || v.Parent() == v.Pkg().Scope() {
			return false // a package variable can change at run time
		}
		assigned, safe := false, true
		ast.Inspect(body, func(n ast.Node) bool {
			switch s := n.(type) {
			case *ast.AssignStmt:
				for i, l := range s.Lhs {
					if id, ok := l.(*ast.Ident); ok && (info.Defs[id] == obj || info.Uses[id] == obj) {
						assigned = true
						if len(s.Rhs) != len(s.Lhs) || s.Tok != token.ASSIGN && s.Tok != token.DEFINE && s.Tok != token.ADD_ASSIGN ||
							!safeSQL(info, body, s.Rhs[i], depth+1, params, need) {
							safe = false
						}
					}
				}
			case *ast.ValueSpec:
				for i, id := range s.Names {
					if info.Defs[id] == obj {
						assigned = true
						if i >= len(s.Values) || !safeSQL(info, body, s.Values[i], depth+1, params, need) {
							safe = false
						}
					}
				}
			}
			return true
		})
		return assigned && safe
	}
	return false
}

// firstStringArg is the call's first argument of string type (the SQL text).
func firstStringArg(info *types.Info, call *ast.CallExpr) ast.Expr {
	for _, a := range call.Args {
		if tv, ok := info.Types[a]; ok {
			if b, ok := tv.Type.Underlying().(*types.Basic); ok && b.Info()&types.IsString != 0 {
				return a
			}
		}
	}
	return nil
}

// paramIndex maps the parameters of fd to their positions.
func paramIndex(info *types.Info, fd *ast.FuncDecl) map[types.Object]int {
	params := map[types.Object]int{}
	k := 0
	for _, fld := range fd.Type.Params.List {
		for _, n := range fld.Names {
			params[info.Defs[n]] = k
			k++
		}
		if len(fld.Names) == 0 {
			k++
		}
	}
	return params
}

// calleeObj is the function or method a call names (nil for a call of a function value).
func calleeObj(info *types.Info, call *ast.CallExpr) types.Object {
	fun := call.Fun
	if ix, ok := fun.(*ast.IndexExpr); ok {
		fun = ix.X
	}
	if ix, ok := fun.(*ast.IndexListExpr); ok {
		fun = ix.X
	}
	switch f := fun.(type) {
	case *ast.Ident:
		return info.Uses[f]
	case *ast.SelectorExpr:
		if sel, ok := info.Selections[f]; ok {
			return sel.Obj()
		}
		return info.Uses[f.Sel]
	}
	return nil
}

func calleeName(call *ast.CallExpr) string {
	switch f := call.Fun.(type) {
	case *ast.SelectorExpr:
		return f.Sel.Name
	case *ast.Ident:
		return f.Name
	case *ast.IndexExpr: // a generic function with explicit type arguments
		if id, ok := f.X.(*ast.Ident); ok {
			return id.Name
		}
	case *ast.IndexListExpr:
		if id, ok := f.X.(*ast.Ident); ok {
			return id.Name
		}
	}
	return ""
}

func funcName(pkg string, fd *ast.FuncDecl) string {
	if fd.Recv == nil || len(fd.Recv.List) == 0 {
		return pkg + "." + fd.Name.Name
	}
	var recv string
	switch r := fd.Recv.List[0].Type.(type) {
	case *ast.StarExpr:
		if id, ok := r.X.(*ast.Ident); ok {
			recv = "(*" + id.Name + ")"
		}
	case *ast.Ident:
		recv = r.Name
	}
	return pkg + "." + recv + "." + fd.Name.Name
}
