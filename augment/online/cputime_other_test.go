//go:build !unix

package online

import "time"

// processCPU is not measured here.
func processCPU() time.Duration { return 0 }
