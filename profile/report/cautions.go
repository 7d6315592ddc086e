package report

import (
	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// heatedC is the sample temperature from which the report treats the tool
// as heated: above it, surfaces burn at a touch of a second or so (common
// practice for hot-surface warnings; the exact limit depends on the
// material touched).
const heatedC = 45

// heated reports whether the experiment file says the sample was hot, and
// whether it says anything at all.
func heated(e *experiment.Experiment) (hot, known bool) {
	if e == nil || e.TemperatureC == nil {
		return false, false
	}
	return *e.TemperatureC >= heatedC, true
}

// measurementCautions are the limits of what the camera sees, general and
// for the geometry and temperature of e (nil: the general ones).
func measurementCautions(e *experiment.Experiment) []string {
	c := []string{
		"The camera sees one plane near the free edge of the sample. The meniscus, edge effects and edge fracture " +
			"can make the flow there differ from the flow inside the gap; a profile measured at the edge is not " +
			"proof of the flow in the bulk of the sample.",
		"Tracers that leave the focal plane, and motion out of the image plane (secondary flow, sample " +
			"expulsion), are not measured; they show only as shorter tracks and missing cells.",
		"The uncertainties are statistical (the scatter of tracer displacements and of whole tracks); errors of " +
			"the scale, of the wall positions and of the frame timing come on top.",
	}
	if e != nil {
		switch e.Geometry.Kind {
		case geometry.Plates:
			c = append(c, "Sliding plates shear uniformly only away from the plates' ends and edges: the filmed "+
				"region should lie well inside them.")
		case geometry.ConePlate:
			c = append(c, "At the cone's rim the gap is widest and the free surface curves: the rim's flow is the "+
				"flow of the cone only as far as the meniscus is flat. The rate is the same at every radius only "+
				"for small cone angles.")
		case geometry.ParallelPlate:
			c = append(c, "Between parallel plates the rate grows with the radius: the rim, which the camera "+
				"sees, has the largest rate, so slip or banding that sets in above a critical rate shows there "+
				"first and may be absent further in.")
		case geometry.Couette:
			c = append(c, "In a Couette cell the rate falls from the inner to the outer cylinder; the nominal "+
				"rate is a representative value between them. Filming through a curved transparent cup "+
				"magnifies the gap unevenly: calibrate the scale through the same wall.")
		}
	}
	hot, given := heated(e)
	shimmer := "Hot air in front of an oven window shimmers: its varying refraction moves the image of the " +
		"tracers by fractions of a pixel from frame to frame, which shows as noise, or as false motion after " +
		"the stop. Let the temperature settle, keep the air path short and still, and compare a recording at rest."
	switch {
	case hot:
		c = append(c, "The sample was at "+formatValue(*e.TemperatureC, "°C")+". "+shimmer)
	case !given:
		c = append(c, "When the sample is filmed through the window of an oven or a heated shroud: "+shimmer)
	}
	return c
}

// safetyCautions are the safety notes of the geometry and temperature of
// e (nil: for every geometry), ending with the deference to local rules.
func safetyCautions(e *experiment.Experiment) []string {
	laser := "Laser light sheets and illuminators used to light the tracers can injure the eye: follow the " +
		"laser class of the source, use the eyewear and enclosures it requires, and never look into the beam " +
		"or its reflections off polished tools."
	tools := map[geometry.Kind]string{
		geometry.Plates: "Sliding-plate drives push with large force and leave pinch points between the moving " +
			"plate and its frame: keep fingers, cables and the camera mount out of its travel, and stop the drive " +
			"before reaching in.",
		geometry.ConePlate: "The cone turns with large torque and its rim closes on the plate; its truncated tip " +
			"and the trimming tools are sharp: keep hands, hair, sleeves and cables clear while it turns, and " +
			"trim only at standstill.",
		geometry.ParallelPlate: "The rotating plate's rim moves fastest and catches hair, sleeves and cables; " +
			"sample thrown off the rim (edge fracture) can fly: keep clear while it turns and shield the optics.",
		geometry.Couette: "The rotating cylinder (bob or cup) winds up hair, sleeves and cables; a sample that " +
			"climbs the rod or overflows the cup can spill: keep clear while it turns and fill only to the mark.",
	}
	c := []string{laser}
	if e != nil {
		if t, ok := tools[e.Geometry.Kind]; ok {
			c = append(c, t)
		}
	} else {
		c = append(c, "Rheometer tools rotate or slide with large force: keep hands, hair, cables and cameras "+
			"clear of moving parts.")
	}
	hot, given := heated(e)
	oven := "Heated shrouds and ovens, their windows, the tools and the sample burn at a touch: open an oven " +
		"only as its procedure says, wear heat-resistant gloves, and let the tools cool before cleaning. An " +
		"inert-gas purge of an oven displaces the air of a small room."
	melt := "Hot polymer melts stick to skin and burn, and can release fumes as they degrade: work under the " +
		"extraction your lab prescribes."
	switch {
	case hot:
		c = append(c, "The sample was at "+formatValue(*e.TemperatureC, "°C")+". "+oven, melt)
	case !given:
		c = append(c, "If the tool is heated: "+oven, melt)
	}
	return append(c, "Local rules, the instrument maker's instructions and your qualified safety staff prevail "+
		"over anything in this report.")
}
