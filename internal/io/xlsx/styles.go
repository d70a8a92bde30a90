package xlsx

import (
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"

	"slopewise/internal/io/table"
)

// relStyles is the relationship type suffix of the styles part (ECMA-376
// Part 1, section 15.2).
const relStyles = "/styles"

// maxCellFormats bounds the cell formats (<xf> of <cellXfs>) read from
// the styles part. Excel allows about 64,000 (its specifications and
// limits, from memory); the bound leaves room for other writers.
const maxCellFormats = 1 << 20

// readStyles reads which cell styles show numbers as dates or times: the
// number format of each <xf> in <cellXfs>, built-in (isBuiltinDate) or
// custom (<numFmts>, isDateFormat). The part is streamed, its nesting and
// its count of formats bounded; a workbook without one has no dates
// shown as such.
func (p *Package) readStyles() error {
	part := p.StylesPart
	if part == "" || p.File(part) == nil {
		return nil
	}
	if err := p.checkDepth(part); err != nil {
		return err
	}
	rc, err := p.OpenPart(part, p.LimitXML)
	if err != nil {
		var e *table.Error
		if errors.As(err, &e) {
			return e
		}
		return &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the styles part cannot be read", Underlying: err}
	}
	defer rc.Close()
	dec := NewXMLDecoder(rc)
	custom := map[int]string{}
	var ids []int // number format of each cell format, -1 when none
	depth, xfsDepth, fmtsDepth := 0, -1, -1
	for {
		tok, err := dec.RawToken()
		if err == io.EOF {
			break
		}
		if err != nil {
			return &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the styles part cannot be read", Underlying: err}
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			switch t.Name.Local {
			case "cellXfs":
				xfsDepth = depth
			case "numFmts":
				fmtsDepth = depth
			case "xf":
				if depth != xfsDepth+1 {
					break
				}
				if len(ids) >= maxCellFormats {
					return &table.Error{Path: p.Path, Cause: table.ErrUnusual, Detail: fmt.Sprintf("the styles part %s defines more than %d cell formats", part, maxCellFormats)}
				}
				id := -1
				if v := Attr(t, "numFmtId"); v != "" {
					if n, err := strconv.Atoi(strings.TrimSpace(v)); err == nil {
						id = n
					}
				}
				ids = append(ids, id)
			case "numFmt":
				if depth != fmtsDepth+1 || len(custom) >= maxCellFormats {
					break
				}
				if n, err := strconv.Atoi(strings.TrimSpace(Attr(t, "numFmtId"))); err == nil {
					custom[n] = Attr(t, "formatCode")
				}
			}
		case xml.EndElement:
			switch {
			case depth == xfsDepth:
				xfsDepth = -1
			case depth == fmtsDepth:
				fmtsDepth = -1
			}
			depth--
		}
	}
	p.dateXf = make([]bool, len(ids))
	for i, id := range ids {
		if id < 0 {
			continue
		}
		if code, ok := custom[id]; ok {
			p.dateXf[i] = IsDateFormat(code)
		} else {
			p.dateXf[i] = isBuiltinDate(id)
		}
	}
	return nil
}
