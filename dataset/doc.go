// Package dataset reads a study's data extract into typed, columnar tables.
//
// A Table is a set of named columns of equal length. Each Column is stored by
// type, never as one string per cell after loading: numbers as float64 with a
// missing bitmap; categories as int32 codes into a dictionary of levels (in
// ascending order for an ordinal variable); dates as the half-open interval of
// days since 1970-01-01 that the value can fall in, with the precision it was
// written at, so that ISO 8601 partial dates ("2023-05", "2023") keep their
// meaning (see ParseISO8601 and LessEq). Key columns (subject, visit,
// sequence) and the site column are named on the table so that every later
// finding can point to its record.
//
// Variable types are inferred by the rules documented on Builder.Column and
// can be overridden by a variables file (ReadVarsFile) or, for SDTM studies,
// by Define-XML metadata.
//
// Readers: CSV (ReadCSV: delimiter detection, UTF-8 with or without BOM,
// Windows-1252 and Latin-1 through golang.org/x/text, configurable missing
// tokens); SAS transport v5 (ReadXPT, from the published record layout, IBM
// hexadecimal floating point converted exactly, special missing values kept);
// CDISC Dataset-JSON v1.1 (ReadDatasetJSON, also its NDJSON and compressed
// forms); and Define-XML 2.0/2.1 (ReadDefine), whose variable definitions and
// ranked codelists override type inference. A folder is read as one study
// (Open), one table per file, in any mix of the formats.
//
// Errors caused by input files are *ParseError values carrying the file and
// the 1-based line and column (or record, row or byte offset for binary and
// JSON formats). The package never prints or exits.
//
// Shaping: Study.Shape turns an SDTM study into one analysis table at a Level
// (ParseLevel reads "subject", "visit", "record:AE", "table:NAME"). At visit
// level findings domains are pivoted to one variable per test, "VS.SYSBP",
// keyed by USUBJID and VISITNUM, with qualifiers that vary within a cell
// added to the key ("VS.SYSBP.SITTING"); at subject level DM is extended with
// baseline values ("VS.SYSBP.BL") and per-subject summaries of events and
// interventions ("AE.N", "AE.MAXSEV"); at record level one domain keeps its
// rows, with DM attributes joined as "DM.SEX". SITEID always comes from DM
// (SDTM.md §1). A ShapeReport counts every row dropped, every collision (per
// site), every mixed-unit test and every qualifier added; nothing is silent.
package dataset
