package pipeline

import (
	"fmt"

	"gaptrace/track/frames"
)

// watchFields wraps the input src in the comb measurement and, when the
// experiment file gives camera.fields, splits its frames into fields
// (frames.Watch).
func watchFields(cfg Config, src frames.Source) (frames.Source, *frames.FieldSource, error) {
	w, f, err := frames.Watch(src, cfg.Experiment.Camera.Fields)
	if err != nil {
		src.Close()
		return nil, nil, inputErr(err)
	}
	return w, f, nil
}

// fieldNotes returns the summary's warnings of the comb measurement: the
// frames look interlaced and were analysed whole, or they were analysed
// by field.
func (r *Recording) fieldNotes() []string {
	if r.fields == nil {
		return nil
	}
	c := r.fields.Combs()
	if w := c.Warning(); w != "" {
		return []string{w}
	}
	if c.Order != "" {
		return []string{fmt.Sprintf("camera.fields %s: each frame was analysed as its two fields, frames of their own at twice the frame rate (%g fields/s), its missing rows interpolated; a field's time is its frame's, or half a frame interval later",
			c.Order, r.fields.Info().FPS)}
	}
	return nil
}
