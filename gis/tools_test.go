package gis

import (
	"os"
	"os/exec"
	"testing"
)

// requireTool returns the path of an outside program the test checks
// against (GDAL's ogr2ogr, ogrinfo, gdalsrsinfo; PROJ's cs2cs, geod,
// projinfo). Without it the test is skipped, or fails when
// HEADROOM_REQUIRE_GDAL=1, as CI sets, so CI never skips these checks.
func requireTool(t *testing.T, name string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err == nil {
		return p
	}
	if os.Getenv("HEADROOM_REQUIRE_GDAL") == "1" {
		t.Fatalf("%s not found and HEADROOM_REQUIRE_GDAL=1; install gdal-bin and proj-bin", name)
	}
	t.Skipf("%s not found; install gdal-bin and proj-bin to run this test", name)
	return ""
}
