package outguard

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestCheck: every way of naming an input as an output is refused with
// ErrOntoInput, and outputs that cannot be written with ErrNotWritable;
// a fresh file beside the inputs is accepted. (Common practice, no source:
// file identity is os.SameFile, the device and inode of the file.)
func TestCheck(t *testing.T) {
	dir := t.TempDir()
	data := filepath.Join(dir, "d.csv")
	os.WriteFile(data, []byte("text,label\n"), 0o644)
	folder := filepath.Join(dir, "corpus")
	os.MkdirAll(filepath.Join(folder, "spam"), 0o755)
	os.Mkdir(filepath.Join(dir, "sub"), 0o755)
	link := filepath.Join(dir, "link.csv")
	if err := os.Symlink(data, link); err != nil {
		t.Fatal(err)
	}
	hard := filepath.Join(dir, "hard.csv")
	if err := os.Link(data, hard); err != nil {
		t.Fatal(err)
	}
	linkedDir := filepath.Join(dir, "linked-dir")
	if err := os.Symlink(filepath.Join(dir, "sub"), linkedDir); err != nil {
		t.Fatal(err)
	}
	inputs := []File{{"--data", data}, {"--dev", ""}, {"--test", filepath.Join(dir, "missing.csv")}, {"--corpus", folder}}
	cases := []struct {
		name    string
		outputs []File
		kind    error  // nil: accepted
		want    string // substring of the message
	}{
		{"a new file", []File{{"--out", filepath.Join(dir, "m.tt")}}, nil, ""},
		{"no output", []File{{"--out", ""}}, nil, ""},
		{"the same path", []File{{"--out", data}}, ErrOntoInput, "--out " + data + " is --data " + data},
		{"through ..", []File{{"--out", filepath.Join(dir, "sub", "..", "d.csv")}}, ErrOntoInput, "is --data"},
		{"relative", []File{{"--out", rel(t, data)}}, ErrOntoInput, "is --data"},
		{"a symbolic link to it", []File{{"--out", link}}, ErrOntoInput, "is a symbolic link to --data"},
		{"a hard link to it", []File{{"--out", hard}}, ErrOntoInput, "is the same file (through a hard or symbolic link) as --data"},
		{"through a linked folder", []File{{"--out", filepath.Join(linkedDir, "..", "d.csv")}}, ErrOntoInput, "--data"},
		{"a missing input", []File{{"--out", filepath.Join(dir, "missing.csv")}}, ErrOntoInput, "is --test"},
		{"inside an input folder", []File{{"--out", filepath.Join(folder, "spam", "new.txt")}}, ErrOntoInput, "is inside the --corpus folder"},
		{"two outputs one file", []File{{"--export", filepath.Join(dir, "a.csv")}, {"--masked-out", filepath.Join(dir, "sub", "..", "a.csv")}}, ErrOntoInput, "are one file"},
		{"a folder", []File{{"--out", filepath.Join(dir, "sub")}}, ErrNotWritable, "--out " + filepath.Join(dir, "sub") + " is a folder: give a file name"},
		{"a missing folder", []File{{"--out", filepath.Join(dir, "no", "m.tt")}}, ErrNotWritable,
			"the folder " + filepath.Join(dir, "no") + " does not exist: create it or choose another --out"},
		{"a missing folder of a side file", []File{{"--export's stability table", filepath.Join(dir, "no", "a.stability.csv")}}, ErrNotWritable,
			"does not exist: create it or choose another --export"},
		{"under a file", []File{{"--out", filepath.Join(data, "m.tt")}}, ErrNotWritable, data + " is a file, not a folder: choose another --out"},
	}
	before := list(t, dir)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := Check(c.outputs, inputs)
			switch {
			case c.kind == nil && err != nil:
				t.Fatalf("refused: %v", err)
			case c.kind != nil && !errors.Is(err, c.kind):
				t.Fatalf("got %v, want an error wrapping %v", err, c.kind)
			case c.kind != nil && !strings.Contains(err.Error(), c.want):
				t.Errorf("message %q lacks %q", err, c.want)
			case c.kind != nil && strings.Contains(err.Error(), ".check"):
				t.Errorf("message %q names the probe file", err)
			}
		})
	}
	if after := list(t, dir); after != before {
		t.Errorf("Check left files behind:\nbefore %s\nafter  %s", before, after)
	}
}

// rel is path relative to the working folder.
func rel(t *testing.T, path string) string {
	wd, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	r, err := filepath.Rel(wd, path)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func list(t *testing.T, dir string) string {
	var names []string
	filepath.Walk(dir, func(p string, _ os.FileInfo, _ error) error {
		names = append(names, p)
		return nil
	})
	return strings.Join(names, " ")
}

func ExampleCheck() {
	dir, _ := os.MkdirTemp("", "outguard")
	defer os.RemoveAll(dir)
	data := filepath.Join(dir, "d.csv")
	os.WriteFile(data, []byte("text,label\n"), 0o644)
	err := Check([]File{{"--out", dir + "/x/../d.csv"}}, []File{{"--data", data}})
	fmt.Println(errors.Is(err, ErrOntoInput))
	fmt.Println(strings.ReplaceAll(err.Error(), dir, "DIR"))
	// Output:
	// true
	// --out DIR/x/../d.csv is --data DIR/d.csv: telltale never writes onto its inputs: give the output another file name
}

// TestCheckReadOnlyFolder: a folder that refuses new files is found before
// any work, and the message names the user's path and the folder, not the
// probe file. (Common practice, no source: a 0555 folder refuses new files
// to everyone but the superuser.)
func TestCheckReadOnlyFolder(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("the superuser may write into a read-only folder")
	}
	dir := filepath.Join(t.TempDir(), "ro")
	if err := os.Mkdir(dir, 0o555); err != nil {
		t.Fatal(err)
	}
	defer os.Chmod(dir, 0o755)
	out := filepath.Join(dir, "m.tt")
	err := Check([]File{{"--out", out}}, nil)
	want := "--out " + out + ": a file cannot be made in the folder " + dir + " (permission denied): make the folder writable or choose another --out"
	if !errors.Is(err, ErrNotWritable) || err.Error() != want {
		t.Errorf("got %v, want %q", err, want)
	}
}

func TestCheckInput(t *testing.T) {
	dir := t.TempDir()
	data := filepath.Join(dir, "d.csv")
	os.WriteFile(data, []byte("text,label\n"), 0o644)
	missing := filepath.Join(dir, "missing.vec")
	cases := []struct {
		name   string
		in     File
		folder bool
		want   string // "" when accepted
	}{
		{"a file", File{"--vectors", data}, false, ""},
		{"no path", File{"--vectors", ""}, false, ""},
		{"a folder where a folder will do", File{"--data", dir}, true, ""},
		{"missing", File{"--vectors", missing}, false, "--vectors " + missing + ": no such file: check the path"},
		{"missing, folder or file", File{"--data", missing}, true, "--data " + missing + ": no such file or folder: check the path"},
		{"a folder", File{"--model", dir}, false, "--model " + dir + " is a folder: give a file in it, not the folder"},
		{"under a file", File{"--model", filepath.Join(data, "m.tt")}, false, "--model " + filepath.Join(data, "m.tt") + " cannot be read (not a directory): check the path"},
	}
	for _, c := range cases {
		err := CheckInput(c.in, c.folder)
		switch {
		case c.want == "" && err != nil:
			t.Errorf("%s: refused: %v", c.name, err)
		case c.want != "" && (!errors.Is(err, ErrInput) || err.Error() != c.want):
			t.Errorf("%s: got %v, want %q", c.name, err, c.want)
		}
	}
}

func TestCheckInputUnreadable(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("the superuser may read a file without read permission")
	}
	p := filepath.Join(t.TempDir(), "m.tt")
	if err := os.WriteFile(p, []byte("model"), 0o000); err != nil {
		t.Fatal(err)
	}
	want := "--model " + p + " cannot be read (permission denied): make it readable or give another --model"
	if err := CheckInput(File{"--model", p}, false); !errors.Is(err, ErrInput) || err.Error() != want {
		t.Errorf("got %v, want %q", err, want)
	}
}
