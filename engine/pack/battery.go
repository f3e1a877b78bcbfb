package pack

import (
	"context"
	"fmt"
)

// batteryStep runs the digit battery. The battery engine is not wired yet:
// the [battery] table is read and checked, and the step reports that it
// did not run.
func (r *runner) batteryStep(ctx context.Context) error {
	return fmt.Errorf("the digit battery is not available in this build yet; the [battery] table was checked but not run")
}
