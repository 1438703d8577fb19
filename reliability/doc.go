// Package reliability holds crossform's cross-package reliability tests; it
// has no non-test code. What each test promises and how it checks it is in
// docs/reliability.md:
//
//   - TestBadCorpus reads every file of testdata/bad with the reader its name
//     selects and compares the one-line error with testdata/bad/expected.tsv;
//     no reader panics and none allocates more than badAllocCap bytes.
//   - TestCrashRuleSetSave SIGKILLs a child process saving decisions into a
//     rule set at seeded random moments; the file on disk must always load and
//     hold every decision a completed Save reported. TestCrashOutputs does the
//     same for a checker listing (render.WriteListingFile) and a run manifest
//     (check.Manifest.WriteFile).
//   - TestConcurrentDecide runs eight `crossform decide` processes at once on
//     one rule set: every decision lands exactly once, or its process fails
//     with a clear message.
//   - TestDeterminism runs propose, accept and check with one and with two
//     workers (GOMAXPROCS 1 and 2) and compares rule set, listings and
//     manifest byte for byte.
//
// Child processes are this test binary re-executed with RELIABILITY_CHILD
// set (TestMain), the standard pattern of os/exec's own tests.
package reliability
