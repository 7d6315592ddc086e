package figure

// GapAxis is how a figure draws the position across the gap. The data
// always come as y_um, the height above the stationary wall; the axis
// shows what a rheologist measures in the tool at hand.
type GapAxis struct {
	// Radial draws the radial position r − R_i, from the inner cylinder of
	// a Couette cell, instead of the height above the stationary wall
	// (sliding plates, and the rims of cone-plate and parallel-plate
	// tools).
	Radial bool
	// InnerMoving says, with Radial, that the inner cylinder is the moving
	// wall: then the stationary wall is the outer cylinder and
	// r − R_i = H − y.
	InnerMoving bool
}

// Coord is the drawn coordinate, um, of the height yUM above the
// stationary wall in a gap gapUM wide.
func (a GapAxis) Coord(yUM, gapUM float64) float64 {
	if a.Radial && a.InnerMoving {
		return gapUM - yUM
	}
	return yUM
}

// Label is the axis title in µm (with the text markup of NewPlot).
func (a GapAxis) Label() string {
	if a.Radial {
		return "radial position r − R_{i} (µm)"
	}
	return "height above the stationary wall y (µm)"
}

// NormLabel is the axis title of the coordinate over the gap.
func (a GapAxis) NormLabel() string {
	if a.Radial {
		return "radial position (r − R_{i})/(R_{o} − R_{i})"
	}
	return "height above the stationary wall y/H"
}

// Column is the CSV column of the drawn coordinate, "" when it is y_um
// itself.
func (a GapAxis) Column() string {
	if a.Radial {
		return "r_minus_ri_um"
	}
	return ""
}

// Words names the coordinate in a caption.
func (a GapAxis) Words() string {
	if a.Radial {
		return "the radial position r − R_i from the inner cylinder"
	}
	return "the height y above the stationary wall"
}
