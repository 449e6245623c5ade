//go:build !purego

// An assembly file, empty, so that the compiler accepts uncleared.go's
// declaration of mallocgc without a body (its body is the runtime's).
