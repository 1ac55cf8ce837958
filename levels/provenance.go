package levels

import (
	"fmt"
	"strings"
)

// UnverifiedWarning returns the warning a user gets for a species whose
// constants are not all checked against a source, naming the values when
// the species names them; it returns "" for a verified species. Every
// layer that warns about a species uses this text, so a command can print
// it once however many models repeat it.
func (sp *Species) UnverifiedWarning() string {
	if sp == nil || (!sp.Unverified && len(sp.UnverifiedValues) == 0) {
		return ""
	}
	if len(sp.UnverifiedValues) == 0 {
		return fmt.Sprintf("species %q has constants not checked against a source (see its notes); treat results as illustrative", sp.Name)
	}
	return fmt.Sprintf("species %q: not checked against a source: %s; results that depend on them are illustrative", sp.Name, strings.Join(sp.UnverifiedValues, "; "))
}

// Referenced returns a copy of sp whose Frequency is that of the component
// at offset (Hz, from sp.Frequency, as levels.Component.Offset): velocities
// of every line are then measured from that component's rest frequency,
// as observers of a multi-line species such as OH do for each line. The
// level structure is shared; offsets of lines and components become
// relative to the new Frequency.
func (sp *Species) Referenced(offset float64) *Species {
	c := *sp
	c.Frequency += offset
	c.ReferenceShift += offset
	return &c
}
