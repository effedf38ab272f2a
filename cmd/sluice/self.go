package main

import (
	"os"
	"path/filepath"
	"strings"
)

// selfCommand is how to run this sluice again in the commands it prints:
// "go run ./cmd/sluice" when it runs from Go's build cache (go run), else
// the program as it was invoked ("sluice", "./sluice", "/opt/bin/sluice").
func selfCommand() string {
	if exe, err := os.Executable(); err == nil && strings.Contains(filepath.ToSlash(exe), "/go-build") {
		return "go run ./cmd/sluice"
	}
	if len(os.Args) > 0 && os.Args[0] != "" && !strings.ContainsAny(os.Args[0], " \t\n'\"") {
		return os.Args[0]
	}
	return "sluice"
}
