//go:build !unix

package machine

// umaskKeeps0644 is false where there is no umask to read: the temporary
// file is set to 0644 explicitly.
const umaskKeeps0644 = false
