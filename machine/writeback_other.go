//go:build !linux

package machine

import "os"

// startWriteback does nothing here: the batch's sync pass writes the file.
func startWriteback(*os.File) {}
