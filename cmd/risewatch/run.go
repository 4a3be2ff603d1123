package main

import (
	"context"
	"errors"
	"io"
)

// STUB (lead): the owner of this subcommand replaces this file.
func runDaemon(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("not implemented yet")
}
