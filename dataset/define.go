package dataset

import (
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"
)

// A Define is the part of a Define-XML 2.0 or 2.1 document (CDISC
// Define-XML Specification v2.1; both extend CDISC ODM 1.3.2) that types
// variables: datasets (ItemGroupDef), variables (ItemDef) and codelists.
type Define struct {
	File      string
	Version   string // MetaDataVersion/@def:DefineVersion, e.g. "2.1.0"; "" if absent
	Datasets  []*DefineDataset
	Items     map[string]*DefineItem     // by OID
	CodeLists map[string]*DefineCodeList // by OID
	// Warnings lists problems found while reading (bad numbers, duplicate
	// OIDs); each names the element's OID and line.
	Warnings []string
}

// A DefineDataset is one ItemGroupDef.
type DefineDataset struct {
	OID, Name, Domain, SASDatasetName string
	Class                             string // 2.0 @def:Class or 2.1 def:Class/@Name, e.g. "EVENTS"
	Purpose, Structure, Label         string
	Refs                              []DefineItemRef // in document order
	Line                              int             // 1-based line where the element's start tag ends
}

// A DefineItemRef is one ItemRef of a dataset.
type DefineItemRef struct {
	ItemOID     string
	OrderNumber int // 1-based position in the dataset; 0 when absent
	KeySequence int // 1-based position in the dataset key; 0 when not a key
	Mandatory   bool
	Role        string
}

// A DefineItem is one ItemDef.
type DefineItem struct {
	OID, Name, DataType string
	Length              int    // 0 when absent
	Label               string // Description/TranslatedText (the first, or the English one)
	CodeListOID         string
	DisplayFormat       string
	Origin              string // def:Origin/@Type
	Line                int
}

// A DefineCodeList is one CodeList, items in document order.
type DefineCodeList struct {
	OID, Name, DataType string
	Items               []DefineCodeListItem
	Line                int
}

// A DefineCodeListItem is a CodeListItem or an EnumeratedItem.
type DefineCodeListItem struct {
	CodedValue  string
	Decode      string // Decode/TranslatedText; "" for an EnumeratedItem
	OrderNumber int    // 0 when absent
	Rank        float64
	HasRank     bool
	Extended    bool // def:ExtendedValue="Yes"
}

// ErrNotDefine reports an XML document that is not Define-XML.
var ErrNotDefine = errors.New("not a Define-XML document (want an ODM root element)")

type xText struct {
	Texts []struct {
		Lang string `xml:"lang,attr"`
		Text string `xml:",chardata"`
	} `xml:"TranslatedText"`
}

func (t xText) text() string {
	for _, x := range t.Texts {
		if x.Lang == "en" {
			return strings.TrimSpace(x.Text)
		}
	}
	if len(t.Texts) > 0 {
		return strings.TrimSpace(t.Texts[0].Text)
	}
	return ""
}

type xItemGroupDef struct {
	OID            string `xml:"OID,attr"`
	Name           string `xml:"Name,attr"`
	Domain         string `xml:"Domain,attr"`
	SASDatasetName string `xml:"SASDatasetName,attr"`
	Purpose        string `xml:"Purpose,attr"`
	Structure      string `xml:"Structure,attr"`
	ClassAttr      string `xml:"Class,attr"`
	ClassElem      []struct {
		Name string `xml:"Name,attr"`
	} `xml:"Class"`
	Description xText `xml:"Description"`
	Refs        []struct {
		ItemOID     string `xml:"ItemOID,attr"`
		OrderNumber string `xml:"OrderNumber,attr"`
		KeySequence string `xml:"KeySequence,attr"`
		Mandatory   string `xml:"Mandatory,attr"`
		Role        string `xml:"Role,attr"`
	} `xml:"ItemRef"`
}

type xItemDef struct {
	OID           string `xml:"OID,attr"`
	Name          string `xml:"Name,attr"`
	DataType      string `xml:"DataType,attr"`
	Length        string `xml:"Length,attr"`
	DisplayFormat string `xml:"DisplayFormat,attr"`
	Description   xText  `xml:"Description"`
	CodeListRef   []struct {
		CodeListOID string `xml:"CodeListOID,attr"`
	} `xml:"CodeListRef"`
	Origin []struct {
		Type string `xml:"Type,attr"`
	} `xml:"Origin"`
}

type xCodeList struct {
	OID      string `xml:"OID,attr"`
	Name     string `xml:"Name,attr"`
	DataType string `xml:"DataType,attr"`
	Items    []struct {
		XMLName     xml.Name
		CodedValue  string `xml:"CodedValue,attr"`
		OrderNumber string `xml:"OrderNumber,attr"`
		Rank        string `xml:"Rank,attr"`
		Extended    string `xml:"ExtendedValue,attr"`
		Decode      xText  `xml:"Decode"`
	} `xml:",any"`
}

// ReadDefineFile reads the Define-XML document at path.
func ReadDefineFile(path string) (*Define, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadDefine(path, f)
}

// ReadDefine reads a Define-XML 2.0 or 2.1 document from r (encoding/xml:
// no external entities are fetched). It keeps ItemGroupDef (name, domain,
// class from the 2.0 attribute or the 2.1 child element, ItemRefs with
// OrderNumber and KeySequence), ItemDef (data type, length, label, codelist)
// and CodeList (CodeListItem and EnumeratedItem with OrderNumber, Rank and
// decode) elements wherever they appear; value-level metadata
// (def:ValueListDef) is not applied. Malformed XML or a root other than ODM
// is a *ParseError with the line; malformed attribute values are kept as
// Warnings naming the element's OID.
func ReadDefine(name string, r io.Reader) (*Define, error) {
	dec := xml.NewDecoder(r)
	dec.Strict = true
	dec.CharsetReader = func(charset string, _ io.Reader) (io.Reader, error) {
		return nil, fmt.Errorf("encoding %q is not supported: save the Define-XML file as UTF-8", charset)
	}
	d := &Define{File: name, Items: map[string]*DefineItem{}, CodeLists: map[string]*DefineCodeList{}}
	perr := func(err error) error {
		var se *xml.SyntaxError
		if errors.As(err, &se) {
			return &ParseError{File: name, Line: se.Line, Err: fmt.Errorf("invalid XML: %s", se.Msg)}
		}
		line, col := dec.InputPos()
		return &ParseError{File: name, Line: line, Column: col, Err: err}
	}
	sawRoot := false
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, perr(err)
		}
		se, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		line, _ := dec.InputPos()
		if !sawRoot {
			if se.Name.Local != "ODM" {
				return nil, perr(fmt.Errorf("%w, found <%s>", ErrNotDefine, se.Name.Local))
			}
			sawRoot = true
			continue
		}
		switch se.Name.Local {
		case "MetaDataVersion":
			for _, a := range se.Attr {
				if a.Name.Local == "DefineVersion" {
					d.Version = a.Value
				}
			}
		case "ItemGroupDef":
			var x xItemGroupDef
			if err := dec.DecodeElement(&x, &se); err != nil {
				return nil, perr(err)
			}
			d.addDataset(&x, line)
		case "ItemDef":
			var x xItemDef
			if err := dec.DecodeElement(&x, &se); err != nil {
				return nil, perr(err)
			}
			d.addItem(&x, line)
		case "CodeList":
			var x xCodeList
			if err := dec.DecodeElement(&x, &se); err != nil {
				return nil, perr(err)
			}
			d.addCodeList(&x, line)
		case "ValueListDef", "WhereClauseDef", "MethodDef", "CommentDef", "leaf", "Standards", "AnnotatedCRF", "SupplementalDoc":
			if err := dec.Skip(); err != nil {
				return nil, perr(err)
			}
		}
	}
	if !sawRoot {
		return nil, &ParseError{File: name, Line: 1, Err: ErrNotDefine}
	}
	return d, nil
}

func (d *Define) warnf(line int, f string, a ...any) {
	d.Warnings = append(d.Warnings, fmt.Sprintf("%s:%d: ", d.File, line)+fmt.Sprintf(f, a...))
}

// atoi parses an optional positive integer attribute, warning on bad text.
func (d *Define) atoi(s, attr, oid string, line int) int {
	if s == "" {
		return 0
	}
	n, err := strconv.Atoi(strings.TrimSpace(s))
	if err != nil || n < 0 {
		d.warnf(line, "%s: %s %q is not a non-negative integer; ignored", oid, attr, s)
		return 0
	}
	return n
}

func (d *Define) addDataset(x *xItemGroupDef, line int) {
	ds := &DefineDataset{OID: x.OID, Name: x.Name, Domain: x.Domain, SASDatasetName: x.SASDatasetName,
		Class: x.ClassAttr, Purpose: x.Purpose, Structure: x.Structure, Label: x.Description.text(), Line: line}
	if len(x.ClassElem) > 0 {
		ds.Class = x.ClassElem[0].Name
	}
	if ds.Name == "" {
		d.warnf(line, "ItemGroupDef %q has no Name; ignored", x.OID)
		return
	}
	for _, r := range x.Refs {
		ds.Refs = append(ds.Refs, DefineItemRef{ItemOID: r.ItemOID, Role: r.Role, Mandatory: r.Mandatory == "Yes",
			OrderNumber: d.atoi(r.OrderNumber, "OrderNumber", "ItemRef "+r.ItemOID, line),
			KeySequence: d.atoi(r.KeySequence, "KeySequence", "ItemRef "+r.ItemOID, line)})
	}
	d.Datasets = append(d.Datasets, ds)
}

func (d *Define) addItem(x *xItemDef, line int) {
	if x.OID == "" {
		d.warnf(line, "ItemDef %q has no OID; ignored", x.Name)
		return
	}
	if _, dup := d.Items[x.OID]; dup {
		d.warnf(line, "ItemDef %s defined twice; the first is used", x.OID)
		return
	}
	it := &DefineItem{OID: x.OID, Name: x.Name, DataType: x.DataType, Label: x.Description.text(),
		DisplayFormat: x.DisplayFormat, Line: line, Length: d.atoi(x.Length, "Length", "ItemDef "+x.OID, line)}
	if len(x.CodeListRef) > 0 {
		it.CodeListOID = x.CodeListRef[0].CodeListOID
	}
	if len(x.Origin) > 0 {
		it.Origin = x.Origin[0].Type
	}
	d.Items[x.OID] = it
}

func (d *Define) addCodeList(x *xCodeList, line int) {
	if x.OID == "" {
		d.warnf(line, "CodeList %q has no OID; ignored", x.Name)
		return
	}
	if _, dup := d.CodeLists[x.OID]; dup {
		d.warnf(line, "CodeList %s defined twice; the first is used", x.OID)
		return
	}
	cl := &DefineCodeList{OID: x.OID, Name: x.Name, DataType: x.DataType, Line: line}
	for _, it := range x.Items {
		if it.XMLName.Local != "CodeListItem" && it.XMLName.Local != "EnumeratedItem" {
			continue
		}
		ci := DefineCodeListItem{CodedValue: it.CodedValue, Decode: it.Decode.text(), Extended: it.Extended == "Yes",
			OrderNumber: d.atoi(it.OrderNumber, "OrderNumber", "CodeList "+x.OID, line)}
		if it.Rank != "" {
			r, err := strconv.ParseFloat(strings.TrimSpace(it.Rank), 64)
			if err != nil || r != r {
				d.warnf(line, "CodeList %s: Rank %q of %q is not a number; ignored", x.OID, it.Rank, it.CodedValue)
			} else {
				ci.Rank, ci.HasRank = r, true
			}
		}
		cl.Items = append(cl.Items, ci)
	}
	d.CodeLists[x.OID] = cl
}

// Dataset returns the ItemGroupDef whose Name, or else SASDatasetName,
// equals name (case-insensitive), or nil.
func (d *Define) Dataset(name string) *DefineDataset {
	for _, ds := range d.Datasets {
		if strings.EqualFold(ds.Name, name) {
			return ds
		}
	}
	for _, ds := range d.Datasets {
		if strings.EqualFold(ds.SASDatasetName, name) {
			return ds
		}
	}
	return nil
}

// Keys returns the dataset's key variables in KeySequence order.
func (d *Define) Keys(ds *DefineDataset) []string {
	type kv struct {
		seq  int
		name string
	}
	var ks []kv
	for _, r := range ds.Refs {
		if it := d.Items[r.ItemOID]; it != nil && r.KeySequence > 0 {
			ks = append(ks, kv{r.KeySequence, it.Name})
		}
	}
	sort.SliceStable(ks, func(i, j int) bool { return ks[i].seq < ks[j].seq })
	out := make([]string, len(ks))
	for i, k := range ks {
		out[i] = k.name
	}
	return out
}

// Define-XML data types (Define-XML v2.1 §4.3.1, ItemDef/@DataType) by how
// they type a variable.
var (
	defineNumeric = map[string]bool{"integer": true, "float": true}
	defineDate    = map[string]bool{"date": true, "datetime": true, "partialDate": true, "partialDatetime": true,
		"incompleteDatetime": true, "intervalDatetime": true}
	defineText = map[string]bool{"text": true, "string": true, "time": true, "partialTime": true,
		"durationDatetime": true, "URI": true, "boolean": true, "double": true, "hexBinary": true, "base64Binary": true}
)

// VarSpecs returns type overrides for the variables of the named dataset
// (see Dataset), keyed by variable name, and warnings naming the OID of each
// definition it could not use. The rules:
//
//   - Every variable gets its label (Description).
//   - integer or float: continuous; with a codelist, ordinal, levels in Rank
//     order when every item has a Rank, else in numeric order of the coded
//     values. SDTM identifier names (--SEQ, ...) are left to inference.
//   - text with a codelist: ordinal when every item carries a Rank (ODM 1.3.2:
//     Rank gives an item's position on an ordinal scale; OrderNumber is only
//     the display order and does not make a list ordered), levels in Rank
//     order, ties kept in document order; otherwise binary for a two-item list
//     and nominal for a longer one (levels not fixed, so values outside the
//     list still load).
//   - text without a codelist, time and other types: no type override
//     (inference decides; the caller keeps numeric-looking text as text).
//   - date, datetime, partialDate, partialDatetime, incompleteDatetime,
//     intervalDatetime: date.
//
// An ItemRef without ItemDef, a CodeListRef without CodeList, an unknown
// DataType, a Rank on only some items, or a numeric codelist with a
// non-numeric coded value gives a warning and no type override.
func (d *Define) VarSpecs(dataset string) (map[string]VarSpec, []string) {
	ds := d.Dataset(dataset)
	if ds == nil {
		return nil, []string{fmt.Sprintf("%s: no ItemGroupDef named %q", d.File, dataset)}
	}
	var warns []string
	warn := func(line int, f string, a ...any) {
		warns = append(warns, fmt.Sprintf("%s:%d: ", d.File, line)+fmt.Sprintf(f, a...))
	}
	out := map[string]VarSpec{}
	for _, r := range ds.Refs {
		it := d.Items[r.ItemOID]
		if it == nil {
			warn(ds.Line, "ItemGroupDef %s: ItemRef %s has no ItemDef", ds.OID, r.ItemOID)
			continue
		}
		if it.Name == "" {
			warn(it.Line, "ItemDef %s has no Name", it.OID)
			continue
		}
		spec := VarSpec{Label: it.Label, Source: fmt.Sprintf("%s:%d (ItemDef %s, DataType %s)", d.File, it.Line, it.OID, it.DataType)}
		var cl *DefineCodeList
		if it.CodeListOID != "" {
			if cl = d.CodeLists[it.CodeListOID]; cl == nil {
				warn(it.Line, "ItemDef %s: CodeListRef %s has no CodeList", it.OID, it.CodeListOID)
			} else if len(cl.Items) == 0 {
				warn(cl.Line, "CodeList %s has no items", cl.OID)
				cl = nil
			}
		}
		switch {
		case defineNumeric[it.DataType]:
			if identifierName(it.Name) {
				break
			}
			spec.Type = Continuous
			if cl != nil {
				levels, err := numericOrder(cl)
				if err != nil {
					warn(cl.Line, "ItemDef %s: CodeList %s: %v; typed continuous", it.OID, cl.OID, err)
					break
				}
				spec.Type, spec.Levels = Ordinal, levels
			}
		case defineDate[it.DataType]:
			spec.Type = DateTime
		case it.DataType == "text" && cl != nil:
			levels, ranked, err := rankOrder(cl)
			switch {
			case err != nil:
				warn(cl.Line, "ItemDef %s: CodeList %s: %v; typed nominal", it.OID, cl.OID, err)
				spec.Type = Nominal
			case ranked:
				spec.Type, spec.Levels = Ordinal, levels
			case len(cl.Items) == 2:
				spec.Type = Binary
			default:
				spec.Type = Nominal
			}
		case defineText[it.DataType]:
		default:
			warn(it.Line, "ItemDef %s: unknown DataType %q; type left to inference", it.OID, it.DataType)
		}
		out[it.Name] = spec
	}
	return out, warns
}

// TextVars returns the dataset's variables declared text without a codelist,
// whose numeric-looking values should still be read as text.
func (d *Define) TextVars(dataset string) []string {
	ds := d.Dataset(dataset)
	if ds == nil {
		return nil
	}
	var out []string
	for _, r := range ds.Refs {
		if it := d.Items[r.ItemOID]; it != nil && it.DataType == "text" && it.CodeListOID == "" && it.Name != "" {
			out = append(out, it.Name)
		}
	}
	return out
}

// rankOrder returns the coded values in Rank order when every item has a
// Rank (ranked = true); an error when only some do or values repeat.
func rankOrder(cl *DefineCodeList) (levels []string, ranked bool, err error) {
	n := 0
	seen := map[string]bool{}
	for _, it := range cl.Items {
		if it.HasRank {
			n++
		}
		if seen[it.CodedValue] {
			return nil, false, fmt.Errorf("coded value %q listed twice", it.CodedValue)
		}
		seen[it.CodedValue] = true
	}
	if n == 0 {
		return nil, false, nil
	}
	if n != len(cl.Items) {
		return nil, false, fmt.Errorf("Rank on %d of %d items, so no order", n, len(cl.Items))
	}
	items := append([]DefineCodeListItem(nil), cl.Items...)
	sort.SliceStable(items, func(i, j int) bool { return items[i].Rank < items[j].Rank })
	for _, it := range items {
		levels = append(levels, it.CodedValue)
	}
	return levels, true, nil
}

// numericOrder returns a numeric codelist's values as FormatFloat text (the
// form numeric values take as levels), in Rank order when ranked, else in
// numeric order.
func numericOrder(cl *DefineCodeList) ([]string, error) {
	levels, ranked, err := rankOrder(cl)
	if err != nil {
		return nil, err
	}
	if !ranked {
		items := append([]DefineCodeListItem(nil), cl.Items...)
		vals := make([]float64, len(items))
		for i, it := range items {
			v, err := parseNumber(it.CodedValue)
			if err != nil {
				return nil, fmt.Errorf("coded value %q is not a number", it.CodedValue)
			}
			vals[i] = v
		}
		sort.Float64s(vals)
		levels = levels[:0]
		for _, v := range vals {
			levels = append(levels, FormatFloat(v))
		}
		return levels, nil
	}
	for i, s := range levels {
		v, err := parseNumber(s)
		if err != nil {
			return nil, fmt.Errorf("coded value %q is not a number", s)
		}
		levels[i] = FormatFloat(v)
	}
	return levels, nil
}
