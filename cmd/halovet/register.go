package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"
	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

func init() {
	addVerb("shipments", "list, export, show, void and correct recorded shipments", shipmentsUsage, defineShipments)
	addVerb("year", "close, reopen and list closed reporting years", yearUsage, defineYear)
}

const shipmentsUsage = `shipments list [filters] [flags]
       shipments show ID [flags]
       shipments void ID --reason TEXT [flags]
       shipments correct FILE --reason TEXT [flags]

The register of recorded shipments. A recorded shipment is live (it draws on its
licence's quota and counts in consumption), voided (its draws were given back; it stays
in the register and no longer counts) or superseded (a correction replaced it by a new
version under the same company and key; both versions are kept).

list      prints the recorded shipments the filters select, in the order they were
          stored. --output csv or jsonl writes them in the batch-file columns that
          'halovet check' reads, so a listing can be corrected and fed back with
          'shipments correct'; text prints a table with ids and states; json the
          API's responses, one per page.
show      prints one shipment with the verdict it was recorded with, its quota draws
          and every version of its company and key.
void      voids a live shipment; its draws go back to the quota lines exactly.
correct   reads a batch file (CSV or JSON Lines, as 'check' takes) of corrected
          records; each replaces the live shipment of its company_id and record_key,
          checked like a new record, its quota moved in one transaction. A record
          that is refused changes nothing; the others are still applied.

Nothing declared in a closed reporting year can be voided or corrected ('halovet
year'). Voiding and correcting need the admin token when the server has one.

Examples:
  halovet shipments list --company XA-1001 --year 2026 --output csv > fix.csv
  # edit fix.csv, keep the lines to correct
  halovet shipments correct fix.csv --reason "quantities from the corrected customs entry"
  halovet shipments void 1042 --reason "declared twice by the broker"
  halovet shipments list --state voided --output text`

const yearUsage = `year close YEAR --reason TEXT [flags]
       year reopen YEAR --reason TEXT [flags]
       year list [flags]

Closes a reporting year: from then on nothing declared in it is recorded, voided or
corrected, so what was reported for the year stays as reported. Reopening (with a
reason) allows changes again. Both are kept in the audit log and need the admin token
when the server has one.

Examples:
  halovet year close 2025 --reason "annual data submitted"
  halovet year reopen 2025 --reason "late customs correction of entry 4471"`

// shipmentFilterFlags are the filters of shipments list.
type shipmentFilterFlags struct {
	company, licence, partner, substance, group, from, to, key string
	direction, purpose, condition                              string
	year, pageSize                                             int
	states                                                     []string
}

func (f *shipmentFilterFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&f.company, "company", "", "only shipments of this company")
	fs.StringVar(&f.licence, "licence", "", "only shipments on this licence")
	fs.IntVar(&f.year, "year", 0, "only shipments declared in this year")
	fs.StringVar(&f.from, "from", "", "only shipments declared on or after this date, YYYY-MM-DD")
	fs.StringVar(&f.to, "to", "", "only shipments declared on or before this date, YYYY-MM-DD")
	fs.StringVar(&f.partner, "partner", "", "only shipments with this partner country (ISO 3166-1 alpha-2)")
	fs.StringVar(&f.substance, "substance", "", "only shipments of this substance or blend, or with it as a component")
	fs.StringVar(&f.group, "group", "", "only shipments with a component in this Annex group (A/I ... F/II, or F)")
	fs.StringVar(&f.direction, "direction", "", "only import, export, re-export or transit")
	fs.StringVar(&f.purpose, "purpose", "", "only this declared purpose (the words of the batch files)")
	fs.StringVar(&f.condition, "condition", "", "only virgin, used, recycled or reclaimed")
	fs.StringVar(&f.key, "key", "", "only the versions of this record_key")
	fs.StringSliceVar(&f.states, "state", nil, "only live, voided or superseded shipments (repeat or separate by commas; default all)")
	fs.IntVar(&f.pageSize, "page-size", 500, "shipments asked for per call (1 to 1000)")
}

func (f *shipmentFilterFlags) request() (*halovetv1.ListShipmentsRequest, error) {
	req := &halovetv1.ListShipmentsRequest{CompanyId: f.company, LicenceNumber: f.licence, Year: int32(f.year),
		FromDate: f.from, ToDate: f.to, PartnerCountry: f.partner, Substance: f.substance, AnnexGroup: f.group,
		RecordKey: f.key, PageSize: int32(f.pageSize)}
	if f.direction != "" {
		d, err := terms.ParseDirection(f.direction)
		if err != nil || d == terms.DirectionUnspecified {
			return nil, usageErr("--direction %q: use import, export, re-export or transit", f.direction)
		}
		req.Direction = wireterms.DirectionToWire(d)
	}
	if f.purpose != "" {
		p, err := terms.ParsePurpose(f.purpose)
		if err != nil || p == terms.PurposeUnspecified {
			return nil, usageErr("--purpose %q: %v", f.purpose, err)
		}
		req.Purpose = wireterms.PurposeToWire(p)
	}
	if f.condition != "" {
		c, err := terms.ParseCondition(f.condition)
		if err != nil || c == terms.ConditionUnspecified {
			return nil, usageErr("--condition %q: use virgin, used, recycled or reclaimed", f.condition)
		}
		req.Condition = wireterms.ConditionToWire(c)
	}
	for _, s := range f.states {
		switch strings.ToLower(strings.TrimSpace(s)) {
		case "live":
			req.States = append(req.States, halovetv1.ShipmentState_SHIPMENT_STATE_LIVE)
		case "voided":
			req.States = append(req.States, halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED)
		case "superseded":
			req.States = append(req.States, halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED)
		default:
			return nil, usageErr("--state %q: use live, voided or superseded", s)
		}
	}
	if f.pageSize < 1 || f.pageSize > 1000 {
		return nil, usageErr("--page-size %d: use 1 to 1000", f.pageSize)
	}
	return req, nil
}

func defineShipments(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	var filters shipmentFilterFlags
	filters.register(fs)
	output := fs.String("output", "text", "output: text, json (the API's responses), and for list also csv or jsonl (the batch-file columns 'check' reads)")
	reason := fs.String("reason", "", "void, correct: why (required; kept in the register and the audit log)")
	format := fs.String("format", "", "correct: input format, csv or jsonl (default: from the file extension)")
	return func(ctx context.Context, args []string) error {
		if len(args) == 0 {
			return usageErr("give what to do: list, show ID, void ID or correct FILE (see --help)")
		}
		what, rest := args[0], args[1:]
		switch what {
		case "list":
			if len(rest) != 0 {
				return usageErr("list takes no arguments, only filters (see --help)")
			}
			switch *output {
			case "text", "json", "csv", "jsonl":
			default:
				return usageErr("--output %q: use text, json, csv or jsonl", *output)
			}
		case "show", "void":
			if len(rest) != 1 {
				return usageErr("%s takes one shipment ID", what)
			}
		case "correct":
			if len(rest) != 1 {
				return usageErr("correct takes one FILE of corrected records")
			}
		default:
			return usageErr("%q: use list, show, void or correct", what)
		}
		if what != "list" && *output != "text" && *output != "json" {
			return usageErr("--output %q: %s prints text or json", *output, what)
		}
		if (what == "void" || what == "correct") && strings.TrimSpace(*reason) == "" {
			return usageErr("%s needs --reason: say why (it is kept in the register and the audit log)", what)
		}
		var id int64
		if what == "show" || what == "void" {
			var err error
			if id, err = strconv.ParseInt(rest[0], 10, 64); err != nil || id <= 0 {
				return usageErr("%q is not a shipment ID (a whole number above 0; 'shipments list' shows them)", rest[0])
			}
		}
		var req *halovetv1.ListShipmentsRequest
		if what == "list" {
			var err error
			if req, err = filters.request(); err != nil {
				return err
			}
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		client := halovetv1.NewShipmentServiceClient(conn)
		switch what {
		case "list":
			return listShipments(ctx, client, req, *output, os.Stdout)
		case "show":
			resp, err := client.GetShipment(ctx, &halovetv1.GetShipmentRequest{ShipmentId: id})
			if err != nil {
				return err
			}
			if *output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			return writeShipmentText(os.Stdout, resp)
		case "void":
			resp, err := client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: id, Reason: *reason})
			if err != nil {
				return err
			}
			if *output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			s := resp.GetShipment()
			fmt.Fprintf(os.Stdout, "voided shipment %d (%s, %s); its quota draws are given back:\n", s.GetShipmentId(),
				s.GetRecord().GetCompanyId(), s.GetRecord().GetRecordKey())
			return writeDraws(os.Stdout, s.GetDraws())
		}
		return correctFile(ctx, conn, rest[0], *format, *reason, *output, os.Stdout)
	}
}

// listShipments writes every page of the listing.
func listShipments(ctx context.Context, client halovetv1.ShipmentServiceClient, req *halovetv1.ListShipmentsRequest, output string, w io.Writer) error {
	var rw validate.RecordWriter
	var tw *tabwriter.Writer
	switch output {
	case "csv":
		rw, _ = validate.NewRecordWriter(validate.FormatCSV, w)
	case "jsonl":
		rw, _ = validate.NewRecordWriter(validate.FormatJSONL, w)
	case "text":
		tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "id\tstate\tversion\tcompany\trecord_key\tdeclared\tdirection\tlicence\tsubstance\tnet kg\tODP t\tCO2-eq t")
	}
	n := 0
	for {
		resp, err := client.ListShipments(ctx, req)
		if err != nil {
			return err
		}
		if output == "json" {
			if err := wirejson.Doc(w, resp); err != nil {
				return err
			}
		}
		for _, s := range resp.GetShipments() {
			n++
			rec := service.RecordFromProto(s.GetRecord())
			switch {
			case rw != nil:
				if err := rw.Write(&rec); err != nil {
					return err
				}
			case tw != nil:
				fmt.Fprintf(tw, "%d\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", s.GetShipmentId(), stateWord(s.GetState()), s.GetVersion(),
					rec.CompanyID, rec.Key, s.GetDeclarationDate(), rec.Direction, rec.LicenceNumber, s.GetResolvedDesignation(),
					shown(s.GetNetMassKg(), exact.Kg), shown(s.GetOdpTonnes(), exact.ODPTonnes), shown(s.GetCo2ETonnes(), exact.CO2eTonnes))
			}
		}
		if resp.GetNextPageToken() == "" {
			break
		}
		req.PageToken = resp.GetNextPageToken()
	}
	switch {
	case rw != nil:
		return rw.Flush()
	case tw != nil:
		if err := tw.Flush(); err != nil {
			return err
		}
		_, err := fmt.Fprintf(w, "%d recorded shipments\n", n)
		return err
	}
	return nil
}

func stateWord(s halovetv1.ShipmentState) string {
	return strings.ToLower(strings.TrimPrefix(s.String(), "SHIPMENT_STATE_"))
}

func writeDraws(w io.Writer, ds []*halovetv1.QuotaDraw) error {
	if len(ds) == 0 {
		_, err := fmt.Fprintln(w, "  (no quota draws)")
		return err
	}
	for _, d := range ds {
		state := "drawing"
		if d.GetReleased() {
			state = "given back " + d.GetReleasedAt()
		}
		if _, err := fmt.Fprintf(w, "  licence %s line %d: %s (in the line's unit), %s\n", d.GetLicenceNumber(), d.GetLineNumber(),
			d.GetAmount(), state); err != nil {
			return err
		}
	}
	return nil
}

func writeShipmentText(w io.Writer, resp *halovetv1.GetShipmentResponse) error {
	s := resp.GetShipment()
	r := s.GetRecord()
	fmt.Fprintf(w, "shipment %d: %s, version %d of company %s key %s\n", s.GetShipmentId(), stateWord(s.GetState()), s.GetVersion(),
		r.GetCompanyId(), r.GetRecordKey())
	fmt.Fprintf(w, "  recorded %s", s.GetRecordedAt())
	if s.GetChangedAt() != "" {
		fmt.Fprintf(w, "; %s %s: %s", stateWord(s.GetState()), s.GetChangedAt(), s.GetChangeReason())
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "  declared %s, %s, licence %s, partner %s: %s, %s kg, %s ODP t, %s CO2-eq t\n", s.GetDeclarationDate(),
		strings.ToLower(strings.TrimPrefix(r.GetDirection().String(), "DIRECTION_")), r.GetLicenceNumber(), r.GetPartnerCountry(),
		s.GetResolvedDesignation(), shown(s.GetNetMassKg(), exact.Kg), shown(s.GetOdpTonnes(), exact.ODPTonnes), shown(s.GetCo2ETonnes(), exact.CO2eTonnes))
	if v := s.GetVerdict(); v != nil {
		fmt.Fprintf(w, "  verdict as recorded: %s\n", strings.ToLower(strings.TrimPrefix(v.GetOutcome().String(), "OUTCOME_")))
		for _, f := range v.GetFindings() {
			fmt.Fprintf(w, "    %s %s: %s\n", strings.ToLower(strings.TrimPrefix(f.GetSeverity().String(), "SEVERITY_")), f.GetCode(), f.GetMessage())
		}
	}
	fmt.Fprintln(w, "  quota draws:")
	if err := writeDraws(w, s.GetDraws()); err != nil {
		return err
	}
	if len(resp.GetVersions()) > 1 {
		fmt.Fprintln(w, "  versions:")
		for _, v := range resp.GetVersions() {
			fmt.Fprintf(w, "    %d  version %d  %s  recorded %s  %s\n", v.GetShipmentId(), v.GetVersion(), stateWord(v.GetState()), v.GetRecordedAt(), v.GetChangeReason())
		}
	}
	_, err := fmt.Fprintln(w, "Results are decision support: the treaty text, national law, the national authority and licensed practice prevail.")
	return err
}

// correctFile sends each record of the file as a correction of the live shipment of its
// company and key. A refused correction changes nothing; the rest go on.
func correctFile(ctx context.Context, conn *grpc.ClientConn, path, formatFlag, reason, output string, w io.Writer) error {
	f, err := pickFormat(formatFlag, path)
	if err != nil {
		return err
	}
	in, err := os.Open(path)
	if err != nil {
		return &exitError{code: exitUsage, err: err}
	}
	defer in.Close()
	rd, err := validate.NewReader(f, in)
	if err != nil {
		return &exitError{code: exitUsage, err: fmt.Errorf("%s: %w", path, err)}
	}
	client := halovetv1.NewShipmentServiceClient(conn)
	done, refused := 0, 0
	for {
		rec, lineErr, err := rd.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return &exitError{code: exitUsage, err: fmt.Errorf("%s: %w", path, err)}
		}
		if lineErr != nil {
			refused++
			fmt.Fprintf(w, "line %d: not read: %s\n", lineErr.Line, lineErr.Reason)
			continue
		}
		resp, err := client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: service.RecordToProto(&rec), Reason: reason})
		if err != nil {
			if fatal := callFailure(err); fatal {
				return err
			}
			refused++
			fmt.Fprintf(w, "line %d (%s): not corrected: %s\n", rec.Line, rec.Key, statusText(err))
			continue
		}
		done++
		if output == "json" {
			if err := wirejson.Doc(w, resp); err != nil {
				return err
			}
			continue
		}
		s := resp.GetShipment()
		fmt.Fprintf(w, "line %d (%s): corrected: shipment %d, version %d (replaces %d)\n", rec.Line, rec.Key, s.GetShipmentId(),
			s.GetVersion(), s.GetPreviousShipmentId())
	}
	fmt.Fprintf(w, "%d corrected, %d refused\n", done, refused)
	if refused > 0 {
		return rejectedErr("%d of %d corrections refused", refused, done+refused)
	}
	return nil
}

// callFailure reports whether a call's error ends the whole file (the server is gone or
// refuses the caller) rather than refusing one record.
func callFailure(err error) bool {
	switch status.Code(err) {
	case codes.InvalidArgument, codes.NotFound, codes.FailedPrecondition, codes.AlreadyExists, codes.Aborted:
		return false
	}
	return true
}

// statusText is a refusal's message with the fields it names.
func statusText(err error) string {
	st := status.Convert(err)
	msg := st.Message()
	for _, d := range st.Details() {
		if br, ok := d.(*errdetails.BadRequest); ok && len(br.GetFieldViolations()) > 0 && !strings.Contains(msg, br.GetFieldViolations()[0].GetField()) {
			for _, v := range br.GetFieldViolations() {
				msg += "; " + v.GetField() + ": " + v.GetDescription()
			}
		}
	}
	return msg
}

func defineYear(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := fs.String("output", "text", "output: text or json (the API's response)")
	reason := fs.String("reason", "", "close, reopen: why (required; kept in the audit log)")
	return func(ctx context.Context, args []string) error {
		if len(args) == 0 {
			return usageErr("give what to do: close YEAR, reopen YEAR or list (see --help)")
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		var year int
		switch args[0] {
		case "list":
			if len(args) != 1 {
				return usageErr("list takes no arguments")
			}
		case "close", "reopen":
			if len(args) != 2 {
				return usageErr("%s takes one YEAR", args[0])
			}
			y, err := strconv.Atoi(args[1])
			if err != nil || y < 1986 || y > 2200 {
				return usageErr("%q is not a reporting year (1986 to 2200)", args[1])
			}
			year = y
			if strings.TrimSpace(*reason) == "" {
				return usageErr("%s needs --reason: say why (it is kept in the audit log)", args[0])
			}
		default:
			return usageErr("%q: use close, reopen or list", args[0])
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		client := halovetv1.NewShipmentServiceClient(conn)
		switch args[0] {
		case "close":
			resp, err := client.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: int32(year), Reason: *reason})
			if err != nil {
				return err
			}
			if *output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			fmt.Fprintf(os.Stdout, "reporting year %d closed at %s: nothing declared in it is recorded, voided or corrected until it is reopened\n",
				year, resp.GetClosedYear().GetClosedAt())
		case "reopen":
			resp, err := client.ReopenYear(ctx, &halovetv1.ReopenYearRequest{Year: int32(year), Reason: *reason})
			if err != nil {
				return err
			}
			if *output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			fmt.Fprintf(os.Stdout, "reporting year %d reopened\n", year)
		case "list":
			resp, err := halovetv1.ReadAllPages(ctx, client.ListClosedYears, &halovetv1.ListClosedYearsRequest{PageSize: listPageSize}, "closed_years")
			if err != nil {
				return err
			}
			if *output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			if len(resp.GetClosedYears()) == 0 {
				fmt.Fprintln(os.Stdout, "no reporting year is closed")
			}
			for _, c := range resp.GetClosedYears() {
				fmt.Fprintf(os.Stdout, "%d  closed %s by %s: %s\n", c.GetYear(), c.GetClosedAt(), c.GetClosedBy(), c.GetReason())
			}
		}
		return nil
	}
}
