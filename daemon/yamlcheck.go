package daemon

import (
	"errors"
	"fmt"
	"reflect"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"risewatch/site"
)

var typeOfConfig = reflect.TypeOf(Config{})

// errList collects positioned errors in the site package's format.
type errList struct {
	file string
	list site.ErrorList
}

func (e *errList) at(n *yaml.Node, format string, args ...any) {
	line, col := 1, 1
	if n != nil && n.Line > 0 {
		line, col = n.Line, n.Column
	}
	e.list = append(e.list, site.Error{File: e.file, Line: line, Col: col, Msg: fmt.Sprintf(format, args...)})
}

var yamlErrLine = regexp.MustCompile(`line (\d+): (.*)`)

// yamlErr turns a yaml.v3 decode error ("line N: cannot unmarshal ...") into
// positioned errors.
func (e *errList) yamlErr(n *yaml.Node, err error) {
	var te *yaml.TypeError
	msgs := []string{err.Error()}
	if errors.As(err, &te) {
		msgs = te.Errors
	}
	for _, m := range msgs {
		line := n.Line
		if sm := yamlErrLine.FindStringSubmatch(m); sm != nil {
			line, _ = strconv.Atoi(sm[1])
			m = sm[2]
		}
		m = strings.Replace(m, "time.Duration", "a duration such as 90s, 5m or 1h", 1)
		e.list = append(e.list, site.Error{File: e.file, Line: line, Col: 1, Msg: "daemon: " + m})
	}
}

func (e *errList) err() error {
	if len(e.list) == 0 {
		return nil
	}
	l := append(site.ErrorList(nil), e.list...)
	sort.SliceStable(l, func(i, j int) bool {
		if l[i].Line != l[j].Line {
			return l[i].Line < l[j].Line
		}
		return l[i].Col < l[j].Col
	})
	return l
}

func deref(n *yaml.Node) *yaml.Node {
	for n != nil && n.Kind == yaml.AliasNode {
		n = n.Alias
	}
	if n != nil && n.Kind == yaml.DocumentNode && len(n.Content) == 1 {
		return deref(n.Content[0])
	}
	return n
}

// checkKeys reports every mapping key that names no field of t (by yaml
// tag), recursively, so a misspelt key is an error with its position
// rather than silently ignored.
func checkKeys(el *errList, n *yaml.Node, t reflect.Type, path string) {
	n = deref(n)
	if n == nil {
		return
	}
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	switch t.Kind() {
	case reflect.Struct:
		if t == reflect.TypeOf(time.Location{}) {
			return
		}
		if n.Kind != yaml.MappingNode {
			if n.Tag != "!!null" {
				el.at(n, "%s: expected a mapping", path)
			}
			return
		}
		fields := map[string]reflect.Type{}
		var names []string
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			tag := strings.Split(f.Tag.Get("yaml"), ",")[0]
			if tag == "" || tag == "-" || !f.IsExported() {
				continue
			}
			fields[tag] = f.Type
			names = append(names, tag)
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k := n.Content[i]
			ft, ok := fields[k.Value]
			if !ok {
				hint := ""
				if c := site.Closest(k.Value, names); c != "" {
					hint = fmt.Sprintf(" (did you mean %s?)", c)
				}
				sort.Strings(names)
				el.at(k, "%s: unknown key %q%s; expected one of: %s", path, k.Value, hint, strings.Join(names, ", "))
				continue
			}
			checkKeys(el, n.Content[i+1], ft, path+"."+k.Value)
		}
	case reflect.Slice:
		if n.Kind == yaml.SequenceNode {
			for i, c := range n.Content {
				checkKeys(el, c, t.Elem(), fmt.Sprintf("%s[%d]", path, i))
			}
		}
	}
}

// nodeAt finds the value node at a dotted path ("web.token_env",
// "shards.0"); it returns the deepest node found, for positions.
func nodeAt(n *yaml.Node, path string) *yaml.Node {
	n = deref(n)
	if n == nil {
		return nil
	}
	for _, p := range strings.Split(path, ".") {
		var next *yaml.Node
		switch n.Kind {
		case yaml.MappingNode:
			for i := 0; i+1 < len(n.Content); i += 2 {
				if n.Content[i].Value == p {
					next = deref(n.Content[i+1])
				}
			}
		case yaml.SequenceNode:
			if i, err := strconv.Atoi(p); err == nil && i >= 0 && i < len(n.Content) {
				next = deref(n.Content[i])
			}
		}
		if next == nil {
			return n
		}
		n = next
	}
	return n
}
