module github.com/kchol/kchol

go 1.26.0

require (
	github.com/kyroy/kdtree v0.0.0-20200419114247-70830f883f1d
	golang.org/x/sync v0.25.0
	gonum.org/v1/gonum v0.17.0
)

require github.com/kyroy/priority-queue v0.0.0-20180327160706-6e21825e7e0c // indirect
