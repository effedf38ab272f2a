package model

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"sluice/internal/boundedio"
)

// Columns says which columns of the file play which role. Columns of the
// file that it does not name are ignored.
type Columns struct {
	Date     string   // date column name; "" means a column named "week" if present, else the first column
	KPI      string   // required
	Channels []string // spend columns, required, at least one
	Controls []string // optional
}

// DataError is a problem with the input file, located at a cell. Line and
// Column are 1-based, as in encoding/csv (Column counts bytes); Column is 0
// when the problem is the whole row, Line is 0 when it is the whole file.
type DataError struct {
	File   string
	Line   int
	Column int
	Msg    string // lowercase, names the value and what is wrong with it
	Hint   string // a likely fix, or ""; not part of Error, print it on its own line
}

// Error returns "file:line:column: msg", leaving out column when it is 0 and
// line:column when the line is 0.
func (e *DataError) Error() string {
	loc := e.File
	if e.Line > 0 {
		loc += ":" + strconv.Itoa(e.Line)
		if e.Column > 0 {
			loc += ":" + strconv.Itoa(e.Column)
		}
	}
	if loc == "" {
		return e.Msg
	}
	return loc + ": " + e.Msg
}

// LoadPanel reads the weekly panel in the CSV file at path (see ReadPanel).
// Messages name the file as path was given.
func LoadPanel(path string, cols Columns) (*Panel, error) {
	f, err := boundedio.Open(path, boundedio.MaxInput)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadPanel(f, path, cols)
}

// ReadPanel reads a weekly panel from CSV (RFC 4180 as encoding/csv reads
// it: a header row, then one row per week). Dates are ISO 8601 YYYY-MM-DD and
// consecutive rows are exactly 7 days apart. Cells are decimal numbers
// (optional sign, fraction and exponent; surrounding blanks are ignored).
// Spend and KPI must be finite and non-negative, controls finite. A leading
// UTF-8 byte order mark and CRLF line endings are accepted.
//
// Any problem with the data is returned as a *DataError naming source, the
// line and column of the offending cell, the value and what is wrong; the
// first problem found is reported.
func ReadPanel(r io.Reader, source string, cols Columns) (*Panel, error) {
	l := &loader{file: source}
	if l.file == "" {
		l.file = "<input>"
	}
	if err := l.checkColumns(cols); err != nil {
		return nil, err
	}
	br := bufio.NewReader(r)
	if err := l.skipBOM(br); err != nil {
		return nil, err
	}
	l.cr = csv.NewReader(br)
	l.cr.FieldsPerRecord = -1 // field counts are checked here, with a better message
	l.cr.ReuseRecord = true
	if err := l.readHeader(); err != nil {
		return nil, err
	}
	if err := l.bind(cols); err != nil {
		return nil, err
	}
	p := &Panel{
		Source:   source,
		KPIName:  cols.KPI,
		Channels: append([]string(nil), cols.Channels...),
		Spend:    make([][]float64, len(cols.Channels)),
	}
	if len(cols.Controls) > 0 {
		p.Controls = append([]string(nil), cols.Controls...)
		p.Control = make([][]float64, len(cols.Controls))
	}
	p.DateName = l.header[l.date]
	if err := l.readRows(p); err != nil {
		return nil, err
	}
	if err := l.checkColumnsHaveData(p); err != nil {
		return nil, err
	}
	return p, nil
}

// RequireWeeks returns a *DataError (naming the whole file) when p has fewer
// than min weeks; why says what needs them, e.g. "the model has 31
// parameters".
func (p *Panel) RequireWeeks(min int, why string) error {
	n := len(p.Weeks)
	if n >= min {
		return nil
	}
	have := plural(n, "week")
	if why == "" {
		return &DataError{File: p.Source, Msg: fmt.Sprintf("%s is too few: at least %d are needed", have, min)}
	}
	return &DataError{File: p.Source, Msg: fmt.Sprintf("%s is too few: %s and needs at least %s", have, why, plural(min, "week"))}
}

func plural(n int, unit string) string {
	if n == 1 {
		return "1 " + unit
	}
	return strconv.Itoa(n) + " " + unit + "s"
}

// Roles of a column, as they appear in messages.
const (
	roleDate    = "date"
	roleKPI     = "kpi"
	roleChannel = "channel"
	roleControl = "control"
)

// What a value of each role is called in messages: `spend "abc" in column
// "social" is not a number`.
var valueName = map[string]string{
	roleKPI:     "kpi value",
	roleChannel: "spend",
	roleControl: "control value",
}

const (
	hintDate      = "dates must be YYYY-MM-DD (ISO 8601), e.g. 2024-01-08"
	hintGrouping  = `write numbers without thousands separators and with "." as the decimal point, e.g. 1234567.5`
	hintPlain     = "write plain numbers, without currency signs, units or percent signs"
	hintMissing   = "every week needs a value; missing values are not allowed"
	hintZeroSpend = "write 0 for a week without spend; every week needs a value"
	hintNoWeek    = `the file has no "week" column, so its first column is taken as the date; name the date column`
)

type loader struct {
	file string
	cr   *csv.Reader

	header    []string
	headerPos []int // byte column of each header cell
	headerLn  int

	date        int   // field index of the date column
	firstAsDate bool  // the date column is the first one, for want of a "week" column
	kpi         int   // field index of the KPI column
	channels    []int // field index per channel
	controls    []int // field index per control
}

func (l *loader) errAt(line, col int, hint, format string, args ...any) *DataError {
	return &DataError{File: l.file, Line: line, Column: col, Msg: fmt.Sprintf(format, args...), Hint: hint}
}

// cellErr locates a problem at field i of the record just read.
func (l *loader) cellErr(i int, hint, format string, args ...any) *DataError {
	line, col := l.cr.FieldPos(i)
	return l.errAt(line, col, hint, format, args...)
}

// headerErr locates a problem with a whole column at its header cell.
func (l *loader) headerErr(i int, hint, format string, args ...any) *DataError {
	return l.errAt(l.headerLn, l.headerPos[i], hint, format, args...)
}

// readErr turns an error from the csv reader into a *DataError when it is a
// syntax error, and names the file on any other (I/O) error.
func (l *loader) readErr(err error) error {
	var pe *csv.ParseError
	if !errors.As(err, &pe) {
		return fmt.Errorf("%s: %w", l.file, err)
	}
	msg := pe.Err.Error()
	if pe.StartLine != pe.Line {
		msg += fmt.Sprintf(" (the row starts at line %d)", pe.StartLine)
	}
	hint := ""
	switch {
	case errors.Is(pe.Err, csv.ErrBareQuote):
		hint = `a field that contains " must be enclosed in double quotes, with each inner " written twice`
	case errors.Is(pe.Err, csv.ErrQuote):
		hint = `a quoted field must end with a closing "; an inner " is written twice ("")`
	}
	return l.errAt(pe.Line, pe.Column, hint, "%s", msg)
}

// checkColumns refuses a Columns that cannot describe any file.
func (l *loader) checkColumns(cols Columns) error {
	if cols.KPI == "" {
		return l.errAt(0, 0, "name the column that holds the KPI", "no kpi column is named")
	}
	if len(cols.Channels) == 0 {
		return l.errAt(0, 0, "name at least one spend column", "no channel columns are named")
	}
	for _, c := range cols.Channels {
		if c == "" {
			return l.errAt(0, 0, "", "a channel column name is empty")
		}
	}
	for _, c := range cols.Controls {
		if c == "" {
			return l.errAt(0, 0, "", "a control column name is empty")
		}
	}
	return nil
}

var (
	utf8BOM    = []byte{0xEF, 0xBB, 0xBF}
	utf16BEBOM = []byte{0xFE, 0xFF}
	utf16LEBOM = []byte{0xFF, 0xFE}
)

// skipBOM drops a UTF-8 byte order mark (U+FEFF, which spreadsheet programs
// write at the start of "UTF-8 CSV"; columns on line 1 then count from after
// it, as an editor shows them) and refuses UTF-16 text.
func (l *loader) skipBOM(br *bufio.Reader) error {
	b, err := br.Peek(3)
	if err != nil && err != io.EOF {
		return fmt.Errorf("%s: %w", l.file, err)
	}
	switch {
	case bytes.HasPrefix(b, utf8BOM):
		br.Discard(len(utf8BOM))
	case bytes.HasPrefix(b, utf16BEBOM), bytes.HasPrefix(b, utf16LEBOM):
		return l.errAt(0, 0, "save the file as UTF-8 text", "file is UTF-16 encoded")
	}
	return nil
}

func (l *loader) readHeader() error {
	rec, err := l.cr.Read()
	if err == io.EOF {
		return l.errAt(0, 0, "the first row must name the columns", "file is empty: no header row")
	}
	if err != nil {
		return l.readErr(err)
	}
	l.header = make([]string, len(rec))
	l.headerPos = make([]int, len(rec))
	l.headerLn, _ = l.cr.FieldPos(0)
	first := make(map[string]int, len(rec))
	for i, name := range rec {
		_, l.headerPos[i] = l.cr.FieldPos(i)
		if strings.ContainsRune(name, '\r') {
			return l.errAt(l.headerLn, 0, "the file seems to end its lines with CR alone; save it with LF or CRLF line endings",
				"header row contains a carriage return")
		}
		name = strings.TrimSpace(name)
		l.header[i] = name
		if name == "" {
			continue // an unnamed column (a spreadsheet's row index) cannot be named in Columns
		}
		if j, dup := first[name]; dup {
			return l.cellErr(i, "give every column a distinct name",
				"header names column %s twice (fields %d and %d)", quote(name), j+1, i+1)
		}
		first[name] = i
	}
	return nil
}

// bind finds the field index of every column named in cols.
func (l *loader) bind(cols Columns) error {
	date, dateHint := cols.Date, ""
	if date == "" {
		// A file without a "week" column is dated by its first column,
		// whatever (if anything) that column is called.
		l.date = l.index("week")
		if l.date < 0 {
			l.date = 0
			l.firstAsDate = true
			dateHint = hintNoWeek
		}
		date = l.header[l.date]
	}

	// The same column in two roles would be both, say, spend and KPI.
	role := map[string]string{}
	claim := func(name, r string) error {
		prev, taken := role[name]
		switch {
		case !taken:
			role[name] = r
			return nil
		case prev == r:
			return l.errAt(0, 0, "name each column once", "%s column %q is named twice", r, name)
		default:
			hint := ""
			if prev == roleDate {
				hint = dateHint
			}
			return l.errAt(0, 0, hint, "column %q is given two roles: %s and %s", name, prev, r)
		}
	}
	if date != "" {
		if err := claim(date, roleDate); err != nil {
			return err
		}
	}
	if err := claim(cols.KPI, roleKPI); err != nil {
		return err
	}
	for _, c := range cols.Channels {
		if err := claim(c, roleChannel); err != nil {
			return err
		}
	}
	for _, c := range cols.Controls {
		if err := claim(c, roleControl); err != nil {
			return err
		}
	}

	var err error
	find := func(name, r string) int {
		i := l.index(name)
		if i < 0 && err == nil {
			err = l.errAt(l.headerLn, 0, l.missingHint(name), "%s column %s is not in the header", r, quote(name))
		}
		return i
	}
	if cols.Date != "" {
		l.date = find(date, roleDate)
	}
	l.kpi = find(cols.KPI, roleKPI)
	l.channels = make([]int, len(cols.Channels))
	for k, c := range cols.Channels {
		l.channels[k] = find(c, roleChannel)
	}
	l.controls = make([]int, len(cols.Controls))
	for j, c := range cols.Controls {
		l.controls[j] = find(c, roleControl)
	}
	return err
}

func (l *loader) index(name string) int {
	for i, h := range l.header {
		if h == name && name != "" {
			return i
		}
	}
	return -1
}

// missingHint lists the header's columns, suggesting one that differs from
// name only in case, and says so when the first row looks like data.
func (l *loader) missingHint(name string) string {
	var names []string
	guess, data := "", false
	for _, h := range l.header {
		if h == "" {
			continue
		}
		names = append(names, strconv.Quote(h))
		if strings.EqualFold(h, name) {
			guess = h
		}
		if isDateShape(h) {
			data = true
		}
	}
	hint := "available columns: " + strings.Join(names, ", ")
	if guess != "" {
		hint = fmt.Sprintf("did you mean %q? %s", guess, hint)
	}
	if data {
		hint = "the first row looks like data: the file needs a header row naming the columns; " + hint
	}
	return hint
}

func (l *loader) readRows(p *Panel) error {
	var prev time.Time
	prevLine := 0
	// A jump in the dates is held back until the file is read: when a later
	// row goes back in time the rows are out of order, and saying "week …
	// is missing" would send the user looking for a row that is there.
	var gap error
	fail := func(err error) error {
		if gap != nil {
			return gap
		}
		return err
	}
	for {
		rec, err := l.cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return fail(l.readErr(err))
		}
		line, _ := l.cr.FieldPos(0)
		switch {
		case len(rec) < len(l.header):
			// The column is the byte just past the row's last field: where
			// the missing fields should start.
			_, col := l.cr.FieldPos(len(rec) - 1)
			col += len(rec[len(rec)-1])
			missing := l.header[len(rec)]
			if missing == "" {
				missing = "unnamed"
			}
			return fail(l.errAt(line, col, "every row needs a field for each header column",
				"row has %d fields, the header has %d: the row ends before column %s (field %d)",
				len(rec), len(l.header), quote(missing), len(rec)+1))
		case len(rec) > len(l.header):
			return fail(l.cellErr(len(l.header), "quote fields that contain commas; "+hintGrouping,
				"row has %d fields, the header has %d", len(rec), len(l.header)))
		}

		week, jump, err := l.week(rec, prev, prevLine, len(p.Weeks) > 0)
		if err != nil {
			var ooo *outOfOrder
			if errors.As(err, &ooo) {
				return ooo.DataError // after a jump too: the jump was the rows' order
			}
			return fail(err)
		}
		if jump != nil && gap == nil {
			gap = jump
		}
		y, err := l.number(rec, l.kpi, roleKPI, true)
		if err != nil {
			return fail(err)
		}
		p.Weeks = append(p.Weeks, week)
		p.KPI = append(p.KPI, y)
		for k, i := range l.channels {
			x, err := l.number(rec, i, roleChannel, true)
			if err != nil {
				return fail(err)
			}
			p.Spend[k] = append(p.Spend[k], x)
		}
		for j, i := range l.controls {
			z, err := l.number(rec, i, roleControl, false)
			if err != nil {
				return fail(err)
			}
			p.Control[j] = append(p.Control[j], z)
		}
		prev, prevLine = week, line
	}
	if gap != nil {
		return gap
	}
	if len(p.Weeks) == 0 {
		return l.errAt(l.headerLn, 0, "after the header row, add one row per week", "no data rows after the header")
	}
	return nil
}

// week parses the date in rec and checks that it is exactly 7 days after
// prev (the previous row's week, read at line prevLine) when there is one.
// A jump of whole weeks (weeks missing) is not an error yet: it comes back
// as jump, with the week, for readRows to report if nothing explains it.
func (l *loader) week(rec []string, prev time.Time, prevLine int, hasPrev bool) (t time.Time, jump, err error) {
	i := l.date
	s := strings.TrimSpace(rec[i])
	t, ok := parseDate(s)
	if !ok {
		col := "column " + quote(l.header[i])
		if l.header[i] == "" {
			col = "the unnamed column " + strconv.Itoa(i+1)
		}
		hint := hintDate
		if l.firstAsDate && !hasPrev {
			hint = hintNoWeek + "; " + hint
		}
		switch {
		case s == "":
			return time.Time{}, nil, l.cellErr(i, hint, "date in %s is empty", col)
		case isDateShape(s):
			return time.Time{}, nil, l.cellErr(i, "the month must be 01 to 12 and the day must exist in that month",
				"date %s in %s is not a calendar date", quote(s), col)
		default:
			return time.Time{}, nil, l.cellErr(i, hint, "date %s in %s is not YYYY-MM-DD", quote(s), col)
		}
	}
	if !hasPrev {
		return t, nil, nil
	}
	const day = 24 * 60 * 60
	days := (t.Unix() - prev.Unix()) / day // Unix seconds: no overflow, unlike time.Duration over 292 years
	if days == 7 {
		return t, nil, nil
	}
	const iso = "2006-01-02"
	switch {
	case days == 0:
		return time.Time{}, nil, l.cellErr(i, "keep one row per week: combine or drop the duplicate",
			"week %s appears twice (lines %d and %d)", s, prevLine, l.line(i))
	case days < 0:
		return time.Time{}, nil, &outOfOrder{l.cellErr(i, "sort the rows by date, oldest first",
			"rows are out of order: week %s (line %d) comes after week %s (line %d)", s, l.line(i), prev.Format(iso), prevLine)}
	case days%7 == 0:
		missing := days/7 - 1
		first := prev.AddDate(0, 0, 7)
		if missing == 1 {
			return t, l.cellErr(i, "every week needs a row, even one without spend",
				"week %s is missing: the rows jump from %s to %s", first.Format(iso), prev.Format(iso), s), nil
		}
		last := t.AddDate(0, 0, -7)
		return t, l.cellErr(i, "every week needs a row, even one without spend",
			"%d weeks are missing, %s to %s: the rows jump from %s to %s",
			missing, first.Format(iso), last.Format(iso), prev.Format(iso), s), nil
	default:
		return time.Time{}, nil, l.cellErr(i, "date every row by the same weekday, e.g. the Monday that starts its week",
			"week %s is %s after week %s: rows must be exactly 7 days apart", s, plural(int(days), "day"), prev.Format(iso))
	}
}

// outOfOrder is a row dated before the row above it.
type outOfOrder struct{ *DataError }

func (e *outOfOrder) Unwrap() error { return e.DataError }

func (l *loader) line(i int) int {
	line, _ := l.cr.FieldPos(i)
	return line
}

// number parses field i of rec as a value of the given role.
func (l *loader) number(rec []string, i int, role string, nonNegative bool) (float64, error) {
	what, name := valueName[role], l.header[i]
	s := strings.TrimSpace(rec[i])
	if s == "" {
		hint := hintMissing
		if role == roleChannel {
			hint = hintZeroSpend
		}
		return 0, l.cellErr(i, hint, "%s in column %s is empty", what, quote(name))
	}
	if !isDecimal(s) {
		if isNonFinite(s) {
			hint := ""
			if strings.Contains(strings.ToLower(s), "nan") {
				hint = hintMissing
			}
			return 0, l.cellErr(i, hint, "%s %s in column %s is not a finite number", what, quote(s), quote(name))
		}
		return 0, l.cellErr(i, notNumberHint(s), "%s %s in column %s is not a number", what, quote(s), quote(name))
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) { // only a range error can remain: beyond ±1.8e308
		return 0, l.cellErr(i, "", "%s %s in column %s is not a finite number", what, quote(s), quote(name))
	}
	if nonNegative && v < 0 {
		hint := "spend is money paid out and cannot be negative; check for refunds or credits netted into the column"
		if role == roleKPI {
			hint = "the kpi (revenue or units) cannot be negative"
		}
		return 0, l.cellErr(i, hint, "%s %s in column %s is negative", what, quote(s), quote(name))
	}
	return v + 0, nil // + 0 turns -0 into 0
}

// checkColumnsHaveData refuses a KPI or a channel that is zero in every
// week: the model could learn nothing from it.
func (l *loader) checkColumnsHaveData(p *Panel) error {
	n := plural(len(p.Weeks), "week")
	if allZero(p.KPI) {
		return l.headerErr(l.kpi, "check that the right column is named as the kpi",
			"kpi column %q is zero in all %s", p.KPIName, n)
	}
	for k, x := range p.Spend {
		if allZero(x) {
			return l.headerErr(l.channels[k], "leave the channel out: no response can be learned from a channel that never spent",
				"channel %q has zero spend in all %s", p.Channels[k], n)
		}
	}
	return nil
}

// maxQuoted is how many bytes of a cell a message repeats; a longer cell
// (a whole file pasted into one field, a runaway quote) is cut.
const maxQuoted = 40

// quote quotes s for a message, cutting it after maxQuoted bytes (at a
// character boundary) and saying how long it was.
func quote(s string) string {
	if len(s) <= maxQuoted {
		return strconv.Quote(s)
	}
	cut := maxQuoted
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return fmt.Sprintf("%s… (%d bytes)", strconv.Quote(s[:cut]), len(s))
}

func allZero(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}

// parseDate parses YYYY-MM-DD as midnight UTC, refusing dates that do not
// exist (2023-02-29) rather than normalizing them.
func parseDate(s string) (time.Time, bool) {
	if !isDateShape(s) {
		return time.Time{}, false
	}
	y := atoi(s[0:4])
	m := time.Month(atoi(s[5:7]))
	d := atoi(s[8:10])
	t := time.Date(y, m, d, 0, 0, 0, 0, time.UTC)
	if t.Year() != y || t.Month() != m || t.Day() != d {
		return time.Time{}, false
	}
	return t, true
}

// isDateShape reports whether s is four digits, '-', two digits, '-', two digits.
func isDateShape(s string) bool {
	if len(s) != 10 || s[4] != '-' || s[7] != '-' {
		return false
	}
	for i := 0; i < len(s); i++ {
		if i != 4 && i != 7 && !isDigit(s[i]) {
			return false
		}
	}
	return true
}

func atoi(digits string) int {
	n := 0
	for i := 0; i < len(digits); i++ {
		n = 10*n + int(digits[i]-'0')
	}
	return n
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

// isDecimal reports whether s is a decimal number: an optional sign, digits
// with an optional fraction (at least one digit in all), and an optional
// exponent. strconv.ParseFloat alone would also take hexadecimal, "Inf",
// "NaN" and underscores after a base prefix.
func isDecimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for ; i < len(s) && isDigit(s[i]); i++ {
		digits++
	}
	if i < len(s) && s[i] == '.' {
		for i++; i < len(s) && isDigit(s[i]); i++ {
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for ; i < len(s) && isDigit(s[i]); i++ {
			exp++
		}
		if exp == 0 {
			return false
		}
	}
	return i == len(s)
}

// isNonFinite reports whether s spells NaN or an infinity.
func isNonFinite(s string) bool {
	switch strings.ToLower(strings.TrimLeft(s, "+-")) {
	case "nan", "inf", "infinity":
		return true
	}
	return false
}

// notNumberHint guesses why s is not a number.
func notNumberHint(s string) string {
	if strings.ContainsAny(s, "$€£¥%") {
		return hintPlain
	}
	// Grouped digits: 1,234,567 or 1 234 567 or 1'234'567 or 1_234, and the
	// European 1.234.567 or decimal comma 12,5.
	ungrouped := strings.NewReplacer(",", "", " ", "", "'", "", "_", "", "\u00a0", "", "\u202f", "").Replace(s)
	if ungrouped != s && isDecimal(ungrouped) {
		return hintGrouping
	}
	if strings.Count(s, ".") > 1 && isDecimal(strings.ReplaceAll(s, ".", "")) {
		return hintGrouping
	}
	return ""
}
