module github.com/memix-sim/memix

go 1.26.8

require (
	github.com/mjibson/go-dsp v0.0.0-20180508042940-11479a337f12
	gonum.org/v1/gonum v0.17.0
	gonum.org/v1/hdf5 v0.0.0-20210714002203-8c5d23bc6946
)
