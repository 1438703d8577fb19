package main

import (
	"io"

	"github.com/crossform/crossform/internal/atomicfile"
)

// writeOut calls write with stdout, or with a file at path written
// atomically (a temporary file in the same folder, synced, then renamed).
func writeOut(path string, stdout io.Writer, write func(io.Writer) error) error {
	if path == "" || path == "-" {
		return write(stdout)
	}
	return writeFileAtomic(path, write)
}

func writeFileAtomic(path string, write func(io.Writer) error) error {
	return atomicfile.Write(path, write)
}
