package dataset

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"time"
	"unicode/utf8"
)

// DatasetJSONMeta holds the top-level attributes WriteDatasetJSON writes
// besides those it derives from the table.
type DatasetJSONMeta struct {
	// CreationDateTime is datasetJSONCreationDateTime (ISO 8601); "" writes
	// the current UTC time.
	CreationDateTime   string
	ItemGroupOID       string // "" writes "IG." + table name
	Label              string // dataset label
	FileOID            string
	StudyOID           string
	MetaDataVersionOID string
	MetaDataRef        string // URI of the Define-XML
	Originator         string
	SourceSystem       string // sourceSystem.name; with SourceSystemVersion
	SourceSystemVer    string
	NDJSON             bool // write the NDJSON form: metadata line, one row per line
}

// WriteDatasetJSON writes t as CDISC Dataset-JSON v1.1 (version "1.1.0"),
// attributes in the specification's order so that streaming readers see the
// metadata before the rows. Column dataType: float columns are "integer" when
// every value is a whole number below 2^53 in magnitude, else "double"
// (shortest text that reads back to the same double); coded columns
// "string"; date columns "date" when every value is a whole day, "datetime"
// when every value has a time, else "string" holding ISO 8601 text (invalid
// values written as read; date intervals as their start). Missing values are
// null (SAS special missing codes are not kept). Keys become keySequence,
// Column.Format displayFormat, itemOIDs are "IT.<table>.<column>".
func WriteDatasetJSON(w io.Writer, t *Table, meta DatasetJSONMeta) error {
	bw := bufio.NewWriterSize(w, 64<<10)
	q := func(s string) string {
		b, _ := json.Marshal(s)
		return string(b)
	}
	created := meta.CreationDateTime
	if created == "" {
		created = time.Now().UTC().Format("2006-01-02T15:04:05")
	}
	ig := meta.ItemGroupOID
	if ig == "" {
		ig = "IG." + t.Name
	}
	fmt.Fprintf(bw, `{"datasetJSONCreationDateTime":%s,"datasetJSONVersion":"1.1.0"`, q(created))
	for _, kv := range [][2]string{{"fileOID", meta.FileOID}, {"originator", meta.Originator}} {
		if kv[1] != "" {
			fmt.Fprintf(bw, `,%q:%s`, kv[0], q(kv[1]))
		}
	}
	if meta.SourceSystem != "" {
		fmt.Fprintf(bw, `,"sourceSystem":{"name":%s,"version":%s}`, q(meta.SourceSystem), q(meta.SourceSystemVer))
	}
	for _, kv := range [][2]string{{"studyOID", meta.StudyOID}, {"metaDataVersionOID", meta.MetaDataVersionOID}, {"metaDataRef", meta.MetaDataRef}} {
		if kv[1] != "" {
			fmt.Fprintf(bw, `,%q:%s`, kv[0], q(kv[1]))
		}
	}
	fmt.Fprintf(bw, `,"itemGroupOID":%s,"records":%d,"name":%s,"label":%s,"columns":[`, q(ig), t.NRows, q(t.Name), q(meta.Label))
	keySeq := map[string]int{}
	for i, k := range t.Keys {
		keySeq[k] = i + 1
	}
	type wcol struct {
		c     *Column
		dtype string
		text  []string // per row for date columns written as text
	}
	cols := make([]wcol, len(t.Cols))
	for j, c := range t.Cols {
		wc := wcol{c: c}
		length := 0
		switch c.Storage {
		case StoreFloat:
			wc.dtype = "integer"
			for i, x := range c.Floats {
				if !c.Missing(i) && (x != math.Trunc(x) || math.Abs(x) >= 1<<53 || x == 0 && math.Signbit(x)) {
					wc.dtype = "double"
					break
				}
			}
		case StoreCode:
			wc.dtype = "string"
			for _, l := range c.Levels {
				length = max(length, utf8.RuneCountInString(l))
			}
		case StoreDate:
			allDay, allTime := true, true
			for i := 0; i < t.NRows; i++ {
				if !c.Missing(i) {
					allDay = allDay && c.DatePrec[i] == PrecDay && c.DateHi[i] == c.DateLo[i]+1
					allTime = allTime && c.DatePrec[i] >= PrecHour
				}
			}
			wc.text = make([]string, t.NRows)
			for i := range wc.text {
				wc.text[i] = c.String(i)
			}
			for _, iv := range c.Invalid {
				if iv.Row >= 0 && iv.Row < t.NRows {
					wc.text[iv.Row] = iv.Raw
				}
			}
			switch {
			case len(c.Invalid) > 0:
				wc.dtype = "string"
			case allDay:
				wc.dtype = "date"
			case allTime:
				wc.dtype = "datetime"
			default:
				wc.dtype = "string"
			}
			if wc.dtype == "string" {
				for _, s := range wc.text {
					length = max(length, utf8.RuneCountInString(s))
				}
			}
		default:
			return fmt.Errorf("dataset-json: column %q has no storage", c.Name)
		}
		cols[j] = wc
		if j > 0 {
			bw.WriteByte(',')
		}
		fmt.Fprintf(bw, `{"itemOID":%s,"name":%s,"label":%s,"dataType":%q`, q("IT."+t.Name+"."+c.Name), q(c.Name), q(c.Label), wc.dtype)
		if length > 0 {
			fmt.Fprintf(bw, `,"length":%d`, length)
		}
		if c.Format != "" {
			fmt.Fprintf(bw, `,"displayFormat":%s`, q(c.Format))
		}
		if k, ok := keySeq[c.Name]; ok {
			fmt.Fprintf(bw, `,"keySequence":%d`, k)
		}
		bw.WriteByte('}')
	}
	bw.WriteByte(']')
	if meta.NDJSON {
		bw.WriteString("}\n")
	} else {
		bw.WriteString(`,"rows":[`)
	}
	buf := make([]byte, 0, 64)
	for i := 0; i < t.NRows; i++ {
		if !meta.NDJSON && i > 0 {
			bw.WriteByte(',')
		}
		bw.WriteByte('[')
		for j, wc := range cols {
			if j > 0 {
				bw.WriteByte(',')
			}
			c := wc.c
			switch {
			case wc.text != nil && wc.text[i] != "":
				bw.WriteString(q(wc.text[i]))
			case c.Missing(i):
				bw.WriteString("null")
			case c.Storage == StoreFloat && wc.dtype == "integer":
				bw.Write(strconv.AppendInt(buf[:0], int64(c.Floats[i]), 10))
			case c.Storage == StoreFloat:
				bw.Write(strconv.AppendFloat(buf[:0], c.Floats[i], 'g', -1, 64))
			default:
				bw.WriteString(q(c.String(i)))
			}
		}
		bw.WriteByte(']')
		if meta.NDJSON {
			bw.WriteByte('\n')
		}
	}
	if !meta.NDJSON {
		bw.WriteString("]}\n")
	}
	return bw.Flush()
}
