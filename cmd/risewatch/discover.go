package main

import (
	"context"
	"errors"
	"io"
)

// STUB (lead): the owner of this subcommand replaces this file.
func runDiscover(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("not implemented yet")
}
