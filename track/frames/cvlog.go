package frames

/*
#cgo !windows pkg-config: opencv4
#cgo CXXFLAGS: --std=c++11
#include "cvlog.h"
*/
import "C"

// SilenceOpenCV turns OpenCV's own logging off for the whole process, so
// that what OpenCV would print about a file it cannot read (gaptrace says
// it in its own words) does not reach stderr.
func SilenceOpenCV() { C.gaptraceSilenceOpenCV() }
