//go:build !unix

package hf_test

import "time"

// processCPU is not available here; CPU-time metrics read 0.
func processCPU() time.Duration { return 0 }
