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
