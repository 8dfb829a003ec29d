package biosig

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// Tool returns the path of save2gdf, or skips t when it is not on PATH.
func Tool(t testing.TB) string {
	t.Helper()
	bin, err := exec.LookPath("save2gdf")
	if err != nil {
		t.Skip("save2gdf (Debian biosig-tools) not on PATH")
	}
	return bin
}

// Run runs save2gdf with args in dir and fails t, with what the program
// printed, when it does not succeed.
func Run(t testing.TB, dir string, args ...string) {
	t.Helper()
	cmd := exec.Command(Tool(t), args...)
	cmd.Dir = dir
	if o, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("save2gdf %s: %v %s", strings.Join(args, " "), err, o)
	}
}

// JSON runs save2gdf -JSON on file (a name in dir) and returns its
// standard output from the first '{', where the JSON document starts
// after the lines the program prints before it.
func JSON(t testing.TB, dir, file string) []byte {
	t.Helper()
	cmd := exec.Command(Tool(t), "-JSON", file)
	cmd.Dir = dir
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("save2gdf -JSON %s: %v", file, err)
	}
	i := bytes.IndexByte(out, '{')
	if i < 0 {
		t.Fatalf("save2gdf -JSON %s printed no JSON: %s", file, out)
	}
	return out[i:]
}

// CSV converts file (a name in dir) with save2gdf -CSV to csvName in
// dir and returns the lines of that file, surrounding white space
// trimmed from the whole text: a header line, then one line per frame
// with one column per signal.
func CSV(t testing.TB, dir, file, csvName string) []string {
	t.Helper()
	Run(t, dir, "-CSV", file, csvName)
	b, err := os.ReadFile(filepath.Join(dir, csvName))
	if err != nil {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSpace(string(b)), "\n")
}
