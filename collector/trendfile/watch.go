package trendfile

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"risewatch/collector"
)

// observation is what the last polls saw of one file.
type observation struct {
	size        int64
	mtime       time.Time
	stableSince time.Time // when size and mtime were first seen as they are
	polls       int       // polls in a row that saw them unchanged
	readAt      int64     // size when last read (skip unchanged files)
	done        bool
}

// partialSuffixes mark files still being transferred (common client names).
var partialSuffixes = []string{".tmp", ".part", ".partial", ".filepart", ".crdownload", ".inprogress", "~"}

func isCandidate(name string) bool {
	if strings.HasPrefix(name, ".") || strings.HasPrefix(name, "~") {
		return false
	}
	low := strings.ToLower(name)
	for _, s := range partialSuffixes {
		if strings.HasSuffix(low, s) {
			return false
		}
	}
	return true
}

// watch reads a directory (or one file). Without Watch every file is read
// once, whole, and watch returns. With Watch it polls: a file is read once
// its size and modification time have held for SettleTime; a file that
// grows is continued from its checkpoint. With ProcessedDir a settled file
// is read to the end (its last line too) and moved there; without, only
// complete lines are read and the checkpoint marks how far.
func (s *Source) watch(ctx context.Context, out chan<- []collector.Reading) error {
	c := s.cfg.File
	if c.ProcessedDir != "" {
		if err := os.MkdirAll(c.ProcessedDir, 0o755); err != nil {
			return fmt.Errorf("trend source %s: processed dir: %w", s.cfg.Name, err)
		}
	}
	obs := map[string]*observation{}
	s.pending = map[string]bool{}
	tick := time.NewTicker(s.cfg.PollInterval)
	defer tick.Stop()
	for {
		if err := s.poll(ctx, obs, out, time.Now()); err != nil {
			return err
		}
		if !c.Watch {
			return nil
		}
		select {
		case <-ctx.Done():
			return nil
		case <-tick.C:
		}
	}
}

type candidate struct {
	path  string
	name  string
	size  int64
	mtime time.Time
}

func (s *Source) list() ([]candidate, error) {
	root := s.cfg.File.Path
	st, err := os.Stat(root)
	if err != nil {
		return nil, err
	}
	if !st.IsDir() {
		return []candidate{{path: root, name: filepath.Base(root), size: st.Size(), mtime: st.ModTime()}}, nil
	}
	ents, err := os.ReadDir(root)
	if err != nil {
		return nil, err
	}
	var cs []candidate
	for _, e := range ents {
		if !e.Type().IsRegular() || !isCandidate(e.Name()) {
			continue
		}
		info, err := e.Info()
		if err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				continue
			}
			return nil, err
		}
		cs = append(cs, candidate{path: filepath.Join(root, e.Name()), name: e.Name(), size: info.Size(), mtime: info.ModTime()})
	}
	// Exports arrive in time order: read the oldest first.
	sort.Slice(cs, func(i, j int) bool {
		if !cs[i].mtime.Equal(cs[j].mtime) {
			return cs[i].mtime.Before(cs[j].mtime)
		}
		return cs[i].name < cs[j].name
	})
	return cs, nil
}

// poll lists the folder once, at time now, and reads what is ready.
func (s *Source) poll(ctx context.Context, obs map[string]*observation, out chan<- []collector.Reading, now time.Time) error {
	c := s.cfg.File
	cs, err := s.list()
	if err != nil {
		return fmt.Errorf("trend source %s: %w", s.cfg.Name, err)
	}
	present := map[string]bool{}
	for _, f := range cs {
		if ctx.Err() != nil {
			return nil
		}
		present[f.path] = true
		o := obs[f.path]
		if o == nil || o.size != f.size || !o.mtime.Equal(f.mtime) {
			readAt, done := int64(-1), false
			if o != nil {
				readAt, done = o.readAt, o.done && o.size == f.size
			}
			o = &observation{size: f.size, mtime: f.mtime, stableSince: now, polls: 1, readAt: readAt, done: done}
			obs[f.path] = o
		} else {
			o.polls++
		}
		settled := !c.Watch || (o.polls >= 2 && (now.Sub(o.stableSince) >= s.cfg.SettleTime || now.Sub(f.mtime) >= s.cfg.SettleTime))
		if !settled || o.done || o.readAt == f.size {
			continue
		}
		// A settled file is read to its end, an unterminated last line
		// too (see afterOpenLine for one that grows again). It is done
		// when it will not grow: read once, or moved to ProcessedDir.
		finish := !c.Watch || c.ProcessedDir != ""
		res, err := s.ingest(ctx, f.path, true, finish, out)
		if err != nil {
			if ctx.Err() != nil {
				return nil
			}
			// One bad file must not stop the folder: report it and go on.
			s.log.Error("trend file not read", "source", s.cfg.Name, "file", f.path, "err", err)
			o.done = true
			continue
		}
		switch res {
		case notReady:
			continue
		case readSome:
			o.readAt = f.size
		case readToEnd:
			o.readAt, o.done = f.size, true
			if c.ProcessedDir != "" {
				s.pending[f.path] = true
			}
		case complete:
			o.readAt, o.done = f.size, true
			if c.ProcessedDir != "" {
				if err := moveProcessed(f.path, c.ProcessedDir); err != nil {
					s.log.Error("processed trend file not moved (its checkpoint marks it done)", "source", s.cfg.Name, "file", f.path, "err", err)
				} else {
					delete(obs, f.path)
				}
			}
		}
	}
	for p := range obs {
		if !present[p] {
			delete(obs, p)
		}
	}
	s.movePending(ctx, obs, out)
	return nil
}

// movePending moves the files read to their end (Progress mode) whose
// checkpoint a commit has since marked done.
func (s *Source) movePending(ctx context.Context, obs map[string]*observation, out chan<- []collector.Reading) {
	for path := range s.pending {
		res, err := s.ingest(ctx, path, true, true, out) // answers from the file's state: nothing is read again
		if err != nil || res != complete {
			if err != nil {
				delete(s.pending, path)
			}
			continue
		}
		delete(s.pending, path)
		if id, ok := s.identityOf(path); ok {
			s.committedDone(s.key(id))
		}
		if err := moveProcessed(path, s.cfg.File.ProcessedDir); err != nil {
			s.log.Error("processed trend file not moved (its checkpoint marks it done)", "source", s.cfg.Name, "file", path, "err", err)
		} else {
			delete(obs, path)
		}
	}
}

// moveProcessed renames path into dir, adding -1, -2, … when the name is taken.
func moveProcessed(path, dir string) error {
	base := filepath.Base(path)
	ext := filepath.Ext(base)
	stem := strings.TrimSuffix(base, ext)
	dst := filepath.Join(dir, base)
	for i := 1; ; i++ {
		if _, err := os.Lstat(dst); errors.Is(err, fs.ErrNotExist) {
			break
		}
		if i > 1000 {
			return fmt.Errorf("no free name for %s in %s", base, dir)
		}
		dst = filepath.Join(dir, fmt.Sprintf("%s-%d%s", stem, i, ext))
	}
	return os.Rename(path, dst)
}
