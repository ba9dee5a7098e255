//go:build !(linux || darwin)

package machine

// freeBytes is unknown on this system: the disk-space check is skipped.
func freeBytes(string) int64 { return -1 }
