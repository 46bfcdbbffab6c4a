package stdlib

import (
	"embed"
	"fmt"
	"io/fs"
	"sort"
	"strings"
)

//go:embed modules/*.fw models/*.fw
var files embed.FS

// names lists the .fw files of one folder without their extension.
func names(dir string) []string {
	ents, err := fs.ReadDir(files, dir)
	if err != nil {
		panic("stdlib: " + err.Error())
	}
	var out []string
	for _, e := range ents {
		out = append(out, strings.TrimSuffix(e.Name(), ".fw"))
	}
	sort.Strings(out)
	return out
}

// Modules lists the library modules a model can "use".
func Modules() []string { return names("modules") }

// Models lists the standard models.
func Models() []string { return names("models") }

// Module returns the file name and source of a library module. An unknown
// name gives an error that lists the modules there are.
func Module(name string) (string, []byte, error) {
	return read("modules", name)
}

// Model returns the file name and source of a standard model.
func Model(name string) (string, []byte, error) {
	return read("models", name)
}

func read(dir, name string) (string, []byte, error) {
	path := dir + "/" + name + ".fw"
	if name != "" && !strings.ContainsAny(name, "/\\.") {
		if src, err := files.ReadFile(path); err == nil {
			return "stdlib/" + path, src, nil
		}
	}
	return "", nil, fmt.Errorf("library %s: %s", dir, strings.Join(names(dir), ", "))
}
