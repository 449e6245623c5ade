package main

import (
	"go/parser"
	"go/token"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// docs/security.md promises that bandsolve never runs a program and never
// opens a network connection. This holds the promise in the source: no
// package of the module (tests aside, which run the binary they test)
// imports what runs programs or opens connections. golang.org/x/net/html
// is an HTML parser and stays allowed.
func TestNoProgramsNoNetwork(t *testing.T) {
	banned := map[string]string{
		"os/exec": "runs programs", "plugin": "loads code", "net": "opens connections",
		"net/http": "opens connections", "net/rpc": "opens connections", "net/smtp": "opens connections",
		"crypto/tls": "opens connections", "net/url": "names remote places",
	}
	root := filepath.Join("..", "..")
	files := 0
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() && (strings.HasPrefix(d.Name(), ".") && p != root || d.Name() == "testdata") {
			return filepath.SkipDir
		}
		if d.IsDir() || !strings.HasSuffix(p, ".go") || strings.HasSuffix(p, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(token.NewFileSet(), p, nil, parser.ImportsOnly)
		if err != nil {
			return err
		}
		files++
		for _, im := range f.Imports {
			path, _ := strconv.Unquote(im.Path.Value)
			if why, ok := banned[path]; ok {
				t.Errorf("%s imports %s, which %s", p, path, why)
			}
			if path == "syscall" || path == "golang.org/x/sys/unix" {
				// Exec, ForkExec and sockets through syscall are the way round.
				src, _ := os.ReadFile(p)
				for _, name := range []string{"Exec(", "ForkExec(", "StartProcess(", "Socket(", "Connect("} {
					if strings.Contains(string(src), "syscall."+name) {
						t.Errorf("%s calls syscall.%s", p, name)
					}
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if files < 50 {
		t.Fatalf("read %d Go files; the walk missed the module", files)
	}
}
