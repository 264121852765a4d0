package survey

import (
	"fmt"

	"spotsift/activity/photometry"
)

// loadLightCurve reads the entry's light curve, nil when it has none.
func loadLightCurve(m *Manifest, e *Entry) (*photometry.LightCurve, error) {
	if e.Photometry == "" {
		return nil, nil
	}
	lc, _, err := photometry.Read(m.path(e.Photometry), nil)
	if err != nil {
		return nil, fmt.Errorf("photometry: %w", err)
	}
	return lc, nil
}
