package validate

import "github.com/halovet/halovet/terms"

// Record is one declared shipment as a customs or ERP system sends it. It mirrors the wire
// message halovet.v1.ShipmentRecord field for field; text fields hold what the paper says and
// are parsed by Check, which reports what it cannot read as findings.
type Record struct {
	Key             string          // the client's own key, unique per company, unchanged on retry
	Line            int64           // line in the source file (1 = first line), 0 when not from a file
	Direction       terms.Direction // import, export, re-export or transit
	CompanyID       string          // registered identifier of the declaring company
	LicenceNumber   string          // licence the shipment draws on
	PartnerCountry  string          // ISO 3166-1 alpha-2 (the exporting country for an import)
	DeclarationDate string          // as declared; ISO 8601 "YYYY-MM-DD" is accepted
	Substance       string          // substance or blend as declared: any identifier the resolver takes
	HSCode          string          // declared HS code, 6 digits or more, dots optional
	CAS             string          // declared CAS Registry Number
	Formula         string          // declared formula
	TotalQuantity   string          // total net mass in Unit, as declared: a decimal number with a dot ("1250.5"); may be empty when FillPerPackage and PackageCount are given
	Unit            string          // unit of TotalQuantity and FillPerPackage: "kg", "t", "g" or "lb"
	PackageCount    int64           // number of packages (cylinders, drums, ISO tanks); 0 when not declared
	FillPerPackage  string          // net fill of each package in Unit, as declared; "" when not declared
	Purpose         terms.Purpose   // declared purpose
	Condition       terms.Condition // declared condition; unspecified counts as virgin
	Composition     []DeclaredShare // declared composition of a mixture, when the paper gives one
	// Measured is the composition an analyser or a laboratory measured in the cylinder,
	// when the shipment was tested; Check compares it with the declaration. It is the wire
	// field measured_composition and the batch-file column of that name (ParseMeasured reads
	// the text form).
	Measured []MeasuredShare
	// Unreadable lists fields a reader found but could not convert to their type (an unknown
	// direction word, a container count that is not a whole number, ...). Check turns each
	// into a FIELD_UNREADABLE error, so the rest of the record is still checked.
	Unreadable []FieldIssue
}

// DeclaredShare is one component of a declared composition.
type DeclaredShare struct {
	Identifier string  // any identifier that resolves to exactly one substance
	MassPct    float64 // mass percent of the mixture
}

// FieldIssue is a field a reader could not convert.
type FieldIssue struct {
	Field  string // field (column) name, e.g. "direction"
	Text   string // the text as found, cut to 80 bytes
	Reason string // what is wrong and what is accepted
}

// enumKey reduces s to lower-case letters and digits (terms.Key).
func enumKey(s string) string { return terms.Key(s) }

// cutText shortens s for use in a message (terms.Cut).
func cutText(s string) string { return terms.Cut(s) }
