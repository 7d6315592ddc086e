package experiment

// Step is one segment of the motion program resolved into the moving wall's
// speed, the nominal shear rate and the nominal strain it imposes.
type Step struct {
	StartS, EndS    float64
	WallSpeedUMPerS float64 // speed of the moving wall, um/s
	RatePerS        float64 // nominal shear rate, 1/s
	Strain          float64 // nominal strain of the whole step
}

// DurationS returns the step's length in s.
func (s Step) DurationS() float64 { return s.EndS - s.StartS }

// Program is the motion program resolved for the geometry, in time order.
type Program []Step

// Program resolves the motion segments with the geometry: each gets its wall
// speed, nominal rate and nominal strain, whichever of the three was given.
func (e *Experiment) Program() Program {
	g := e.Geometry
	p := make(Program, 0, len(e.Motion))
	for _, s := range e.Motion {
		st := Step{StartS: s.StartS, EndS: s.EndS}
		d := s.EndS - s.StartS
		switch {
		case s.RatePerS != nil:
			st.RatePerS = *s.RatePerS
		case s.Strain != nil:
			st.RatePerS = *s.Strain / d
		case s.WallSpeedUMPerS != nil:
			st.RatePerS = g.NominalRate(*s.WallSpeedUMPerS)
		}
		if v, ok := s.rotationSpeed(g); ok {
			st.WallSpeedUMPerS, st.RatePerS = v, g.NominalRate(v)
		} else if s.WallSpeedUMPerS != nil {
			st.WallSpeedUMPerS = *s.WallSpeedUMPerS
		} else {
			st.WallSpeedUMPerS = g.WallSpeed(st.RatePerS)
		}
		st.Strain = st.RatePerS * d
		p = append(p, st)
	}
	return p
}

// WallSpeedAt returns the moving wall's speed in um/s at time tS (zero
// outside every step).
func (p Program) WallSpeedAt(tS float64) float64 {
	for _, s := range p {
		if tS >= s.StartS && tS < s.EndS {
			return s.WallSpeedUMPerS
		}
	}
	return 0
}

// RateAt returns the nominal shear rate in 1/s at time tS.
func (p Program) RateAt(tS float64) float64 {
	for _, s := range p {
		if tS >= s.StartS && tS < s.EndS {
			return s.RatePerS
		}
	}
	return 0
}

// StrainAt returns the nominal strain accumulated from t = 0 to tS.
func (p Program) StrainAt(tS float64) float64 {
	var g float64
	for _, s := range p {
		switch {
		case tS >= s.EndS:
			g += s.Strain
		case tS > s.StartS:
			g += s.RatePerS * (tS - s.StartS)
		}
	}
	return g
}

// WallDisplacementAt returns the moving wall's travel in um from t = 0 to tS.
func (p Program) WallDisplacementAt(tS float64) float64 {
	var x float64
	for _, s := range p {
		switch {
		case tS >= s.EndS:
			x += s.WallSpeedUMPerS * s.DurationS()
		case tS > s.StartS:
			x += s.WallSpeedUMPerS * (tS - s.StartS)
		}
	}
	return x
}
