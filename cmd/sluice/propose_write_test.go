package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/internal/atomicfile"
	"sluice/record"
)

func decisionFiles(tag string) []atomicfile.File {
	return []atomicfile.File{
		{Name: "decision.json", Data: []byte(tag + " record"), Perm: 0o644},
		{Name: "brief.json", Data: []byte(tag + " brief data"), Perm: 0o644},
		{Name: "report.html", Data: []byte(tag + " brief"), Perm: 0o644},
	}
}

// The signed-record guard holds at write time: a record signed after
// propose's early check (during its computation) is not overwritten; with
// --replace-signed it is moved aside with its signatures, and the new set
// is complete.
func TestWriteDecisionGuardAtWriteTime(t *testing.T) {
	dir := t.TempDir()
	if err := writeDecisionFiles(dir, decisionFiles("old"), false); err != nil {
		t.Fatal(err)
	}
	if err := guardSigned(dir, false, false); err != nil {
		t.Fatalf("early check on an unsigned record: %v", err)
	}
	// Signed meanwhile.
	sigs := record.SignaturesPath(filepath.Join(dir, "decision.json"))
	if err := os.WriteFile(sigs, []byte("{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	err := writeDecisionFiles(dir, decisionFiles("new"), false)
	if err == nil || !strings.Contains(err.Error(), "refusing to overwrite") {
		t.Fatalf("overwrote a record signed during the computation: %v", err)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "decision.json")); string(b) != "old record" {
		t.Fatalf("record now %q", b)
	}
	if err := atomicfile.CheckSet(dir, "decision.json", "brief.json", "report.html"); err != nil {
		t.Fatalf("the old set is no longer complete: %v", err)
	}
	if err := writeDecisionFiles(dir, decisionFiles("new"), true); err != nil {
		t.Fatal(err)
	}
	aside := filepath.Join(dir, "decision."+record.SHA256Hex([]byte("old record"))[:12])
	for _, p := range []string{aside + ".json", aside + ".signatures.json"} {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("not moved aside: %v", err)
		}
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "decision.json")); string(b) != "new record" {
		t.Fatalf("record now %q", b)
	}
	if err := atomicfile.CheckSet(dir, "decision.json", "brief.json", "report.html"); err != nil {
		t.Fatalf("the new set is not complete: %v", err)
	}
}
