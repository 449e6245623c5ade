//go:build !amd64 || purego

package vecmath

func quoAVX2(dst, x, y []float64)           { panic("vecmath: no vector division on this build") }
func quoByAVX2(dst, x []float64, c float64) { panic("vecmath: no vector division on this build") }
