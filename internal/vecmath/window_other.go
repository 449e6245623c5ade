//go:build !amd64 || purego

package vecmath

func absSecondDiffsAVX512(dst, x []float64) {
	panic("vecmath: no vector differences on this build")
}

func gatherAVX512(c []float64, lob, hib uint64, pick []float64) (below, in int, ok bool) {
	panic("vecmath: no vector gathering on this build")
}
