module github.com/bandsolve/bandsolve

go 1.26.0

require (
	git.sr.ht/~sbinet/gg v0.7.0
	github.com/gocarina/gocsv v0.0.0-20240520201108-78e41c74b4b1
	github.com/golang/freetype v0.0.0-20170609003504-e2365dfdc4a0
	github.com/klauspost/compress v1.20.5
	github.com/spf13/pflag v1.1.0
	golang.org/x/image v0.30.0
	golang.org/x/net v0.62.0
	golang.org/x/sys v0.50.0
	gonum.org/v1/gonum v0.17.0
	gonum.org/v1/plot v0.17.0
)

require (
	codeberg.org/go-fonts/liberation v0.5.0 // indirect
	codeberg.org/go-latex/latex v0.2.0 // indirect
	codeberg.org/go-pdf/fpdf v0.11.1 // indirect
	github.com/ajstarks/svgo v0.0.0-20211024235047-1546f124cd8b // indirect
	golang.org/x/text v0.43.0 // indirect
)
