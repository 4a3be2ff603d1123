package trendfile

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
)

// Checkpoints is a small durable key/value store for ingestion positions.
// A Put that returns nil must survive a crash. The state store implements
// the same interface on SQLite; FileCheckpoints is the file-backed one.
type Checkpoints interface {
	Get(key string) ([]byte, bool, error)
	Put(key string, val []byte) error
}

// FileCheckpoints keeps one file per key in Dir. Put writes a temporary
// file, fsyncs it, renames it over the old one and fsyncs the directory, so
// a crash leaves either the old or the new value, never a torn one.
type FileCheckpoints struct {
	Dir string
	mu  sync.Mutex
}

// NewFileCheckpoints creates dir if needed.
func NewFileCheckpoints(dir string) (*FileCheckpoints, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("checkpoint dir: %w", err)
	}
	return &FileCheckpoints{Dir: dir}, nil
}

func (c *FileCheckpoints) path(key string) string {
	h := sha256.Sum256([]byte(key))
	return filepath.Join(c.Dir, hex.EncodeToString(h[:16])+".ckpt")
}

// Get returns the value stored under key.
func (c *FileCheckpoints) Get(key string) ([]byte, bool, error) {
	b, err := os.ReadFile(c.path(key))
	if errors.Is(err, fs.ErrNotExist) {
		return nil, false, nil
	}
	if err != nil {
		return nil, false, fmt.Errorf("checkpoint %q: %w", key, err)
	}
	return b, true, nil
}

// Put stores val under key durably.
func (c *FileCheckpoints) Put(key string, val []byte) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	dst := c.path(key)
	tmp, err := os.CreateTemp(c.Dir, ".ckpt-*")
	if err != nil {
		return fmt.Errorf("checkpoint %q: %w", key, err)
	}
	_, werr := tmp.Write(val)
	if werr == nil {
		werr = tmp.Sync()
	}
	if cerr := tmp.Close(); werr == nil {
		werr = cerr
	}
	if werr == nil {
		werr = os.Rename(tmp.Name(), dst)
	}
	if werr != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("checkpoint %q: %w", key, werr)
	}
	if d, err := os.Open(c.Dir); err == nil {
		werr = d.Sync()
		d.Close()
	}
	if werr != nil {
		return fmt.Errorf("checkpoint %q: sync dir: %w", key, werr)
	}
	return nil
}

// MemCheckpoints keeps checkpoints in memory (tests, one-shot runs).
type MemCheckpoints struct {
	mu sync.Mutex
	m  map[string][]byte
}

// Get returns the value stored under key.
func (c *MemCheckpoints) Get(key string) ([]byte, bool, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	v, ok := c.m[key]
	return append([]byte(nil), v...), ok, nil
}

// Put stores val under key.
func (c *MemCheckpoints) Put(key string, val []byte) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.m == nil {
		c.m = map[string][]byte{}
	}
	c.m[key] = append([]byte(nil), val...)
	return nil
}
