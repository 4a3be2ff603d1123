//go:build !linux

package fdd

func threadCPU() int64 { return -1 }
