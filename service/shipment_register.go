package service

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

// The register of recorded shipments: list and read them, void and correct them, and
// close reporting years.

// maxReasonChars (licensing_history.go) bounds the reason of a void, a correction, a close
// or a reopen too.

// maxShipmentPage is the largest page of ListShipments.
const maxShipmentPage = 1000

// failed builds a FailedPrecondition status listing the fields whose state refuses the
// call: the request is well formed, the register's state does not allow it.
func failed(vs ...fieldViolation) error {
	br := &errdetails.BadRequest{}
	var msg []string
	for _, v := range vs {
		br.FieldViolations = append(br.FieldViolations, &errdetails.BadRequest_FieldViolation{Field: v.field, Description: v.why})
		msg = append(msg, v.field+": "+v.why)
	}
	st := status.New(codes.FailedPrecondition, strings.Join(msg, "; "))
	if d, err := st.WithDetails(br); err == nil {
		return d.Err()
	}
	return st.Err()
}

// reasonProblem says what is wrong with a reason, or "".
func reasonProblem(reason string) string {
	r := strings.TrimSpace(reason)
	switch {
	case r == "":
		return "is required: say why (it is kept in the register and the audit log)"
	case utf8.RuneCountInString(r) > maxReasonChars:
		return fmt.Sprintf("is %d characters long; at most %d are accepted", utf8.RuneCountInString(r), maxReasonChars)
	}
	if p := validate.TextProblem(r); p != "" {
		return p
	}
	return ""
}

// registerError maps the store's refusals of a change to statuses naming the field.
func (s *Server) registerError(ctx context.Context, err error, idField string) error {
	var yc *store.YearClosedError
	var se *store.StateError
	switch {
	case errors.As(err, &yc):
		return failed(fieldViolation{"declaration_date", yc.Error() + " (ReopenYear, 'halovet year reopen')"})
	case errors.As(err, &se):
		return failed(fieldViolation{idField, se.Error()})
	case errors.Is(err, store.ErrNotFound):
		return notFoundStatus(fmt.Sprintf("%s: %v", idField, err))
	}
	return toStatus(ctx, s.log, err)
}

func rfc3339(t time.Time) string { return ledger.RFC3339(t) }

var stateProto = map[string]halovetv1.ShipmentState{
	store.StateLive:       halovetv1.ShipmentState_SHIPMENT_STATE_LIVE,
	store.StateVoided:     halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED,
	store.StateSuperseded: halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED,
}

var stateText = map[halovetv1.ShipmentState]string{
	halovetv1.ShipmentState_SHIPMENT_STATE_LIVE:       store.StateLive,
	halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED:     store.StateVoided,
	halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED: store.StateSuperseded,
}

// storedVerdict decodes a verdict kept with a shipment; nil when none was kept.
func storedVerdict(b []byte) (*halovetv1.Verdict, error) {
	if b == nil {
		return nil, nil
	}
	v := &halovetv1.Verdict{}
	if err := proto.Unmarshal(b, v); err != nil {
		return nil, fmt.Errorf("stored verdict: %w", err)
	}
	return v, nil
}

// encodeVerdict is the form a verdict is kept in (deterministic, so equal verdicts are
// equal bytes).
func encodeVerdict(v *halovetv1.Verdict) []byte {
	b, err := proto.MarshalOptions{Deterministic: true}.Marshal(v)
	if err != nil {
		return nil // a verdict always encodes; a nil keeps none rather than a broken one
	}
	return b
}

// withStored marks a verdict with the stored shipment it is about.
func withStored(v *halovetv1.Verdict, ref *ledger.StoredRef) {
	v.ShipmentId, v.RecordedAt, v.State = ref.ID, rfc3339(ref.RecordedAt), stateProto[ref.State]
}

func recordedToProto(x *store.StoredShipment) (*halovetv1.RecordedShipment, error) {
	rec := &halovetv1.ShipmentRecord{}
	if err := protojson.Unmarshal(x.RecordJSON, rec); err != nil {
		return nil, fmt.Errorf("shipment %d: stored record: %w", x.ID, err)
	}
	v, err := storedVerdict(x.Verdict)
	if err != nil {
		return nil, fmt.Errorf("shipment %d: %w", x.ID, err)
	}
	if v != nil {
		withStored(v, &ledger.StoredRef{ID: x.ID, State: x.State, RecordedAt: x.RecordedAt})
		v.Recorded = true
	}
	out := &halovetv1.RecordedShipment{ShipmentId: x.ID, State: stateProto[x.State], Version: int32(x.Version),
		PreviousShipmentId: x.PreviousID, Record: rec, Verdict: v, RecordedAt: rfc3339(x.RecordedAt),
		ChangedAt: rfc3339(x.ChangedAt), ChangeReason: x.ChangeReason, DeclarationDate: x.DeclarationDate.Format(dateLayout),
		ResolvedDesignation: x.ResolvedDesignation, NetMassKg: nanoFigure(int64(x.NetMassKg)), OdpTonnes: nanoFigure(int64(x.ODPTonnes)),
		Co2ETonnes: nanoFigure(int64(x.CO2eTonnes)), CountsInConsumption: x.CountsInConsumption}
	if fg := v.GetFigures(); fg != nil && fg.NetMassKg == "" {
		// A verdict stored before the figures were decimal strings keeps its doubles in
		// reserved fields, which decode as unknown fields: its totals are read from the
		// register's columns instead (exact to 9 decimals), its components' figures stay
		// absent.
		fg.NetMassKg, fg.OdpTonnes, fg.Co2ETonnes = out.NetMassKg, out.OdpTonnes, out.Co2ETonnes
	}
	for _, d := range x.Draws {
		out.Draws = append(out.Draws, &halovetv1.QuotaDraw{LicenceNumber: d.LicenceNumber, LineNumber: int32(d.LineNumber),
			Amount: nanoFigure(int64(d.Amount)), Released: d.Released, ReleasedAt: rfc3339(d.ReleasedAt)})
	}
	return out, nil
}

// Listing ---------------------------------------------------------------------------------

// annexGroups is what an annex_group filter accepts: a group, or "F" for Annex F.
var annexGroups = map[string][]string{
	"A/I": {"A/I"}, "A/II": {"A/II"}, "B/I": {"B/I"}, "B/II": {"B/II"}, "B/III": {"B/III"},
	"C/I": {"C/I"}, "C/II": {"C/II"}, "C/III": {"C/III"}, "E/I": {"E/I"},
	"F/I": {"F/I"}, "F/II": {"F/II"}, "F": {"F/I", "F/II"},
}

func (s *Server) shipmentFilter(req *halovetv1.ListShipmentsRequest) (store.ShipmentFilter, []fieldViolation) {
	var vs []fieldViolation
	f := store.ShipmentFilter{CompanyID: strings.TrimSpace(req.GetCompanyId()), LicenceNumber: strings.TrimSpace(req.GetLicenceNumber()),
		RecordKey: strings.TrimSpace(req.GetRecordKey()), Partner: strings.ToUpper(strings.TrimSpace(req.GetPartnerCountry()))}
	if f.Partner != "" && (len(f.Partner) != 2 || f.Partner[0] < 'A' || f.Partner[0] > 'Z' || f.Partner[1] < 'A' || f.Partner[1] > 'Z') {
		vs = append(vs, fieldViolation{"partner_country", fmt.Sprintf("%q is not an ISO 3166-1 alpha-2 code (two letters)", req.GetPartnerCountry())})
	}
	date := func(field, v string) time.Time {
		if strings.TrimSpace(v) == "" {
			return time.Time{}
		}
		t, err := time.Parse(dateLayout, strings.TrimSpace(v))
		if err != nil {
			vs = append(vs, fieldViolation{field, fmt.Sprintf("%q is not a date; accepted: YYYY-MM-DD", v)})
		}
		return t
	}
	f.From, f.To = date("from_date", req.GetFromDate()), date("to_date", req.GetToDate())
	if y := req.GetYear(); y != 0 {
		switch {
		case y < 1986 || y > 2200:
			vs = append(vs, fieldViolation{"year", fmt.Sprintf("%d is outside 1986 to 2200", y)})
		case !f.From.IsZero() || !f.To.IsZero():
			vs = append(vs, fieldViolation{"year", "give a year or a date range (from_date, to_date), not both"})
		default:
			f.From = time.Date(int(y), 1, 1, 0, 0, 0, 0, time.UTC)
			f.To = time.Date(int(y), 12, 31, 0, 0, 0, 0, time.UTC)
		}
	}
	if !f.From.IsZero() && !f.To.IsZero() && f.To.Before(f.From) {
		vs = append(vs, fieldViolation{"to_date", "is before from_date"})
	}
	if sub := strings.TrimSpace(req.GetSubstance()); sub != "" {
		c, ok := s.cat.Load().Resolve(sub).Unique()
		if !ok {
			vs = append(vs, fieldViolation{"substance", fmt.Sprintf("%q names no one catalogue substance or blend; give a designation such as HCFC-22 or R-410A", sub)})
		} else {
			f.Substance = c.Designation
		}
	}
	if g := strings.ToUpper(strings.TrimSpace(req.GetAnnexGroup())); g != "" {
		gs, ok := annexGroups[g]
		if !ok {
			vs = append(vs, fieldViolation{"annex_group", fmt.Sprintf("%q is not an Annex group; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I, F/I, F/II or F (both)", req.GetAnnexGroup())})
		}
		f.AnnexGroups = gs
	}
	if d := req.GetDirection(); d != halovetv1.Direction_DIRECTION_UNSPECIFIED {
		if t, ok := specified(wireterms.DirectionFromWire, d); ok {
			f.Direction = t
		} else {
			vs = append(vs, fieldViolation{"direction", fmt.Sprintf("%d is not a direction", d)})
		}
	}
	if p := req.GetPurpose(); p != halovetv1.Purpose_PURPOSE_UNSPECIFIED {
		if t, ok := specified(wireterms.PurposeFromWire, p); ok {
			f.Purpose = t
		} else {
			vs = append(vs, fieldViolation{"purpose", fmt.Sprintf("%d is not a purpose", p)})
		}
	}
	if c := req.GetCondition(); c != halovetv1.Condition_CONDITION_UNSPECIFIED {
		if t, ok := specified(wireterms.ConditionFromWire, c); ok {
			f.Condition = t
		} else {
			vs = append(vs, fieldViolation{"condition", fmt.Sprintf("%d is not a condition", c)})
		}
	}
	for i, st := range req.GetStates() {
		t, ok := stateText[st]
		if !ok {
			vs = append(vs, fieldViolation{fmt.Sprintf("states[%d]", i), "accepted: SHIPMENT_STATE_LIVE, SHIPMENT_STATE_VOIDED, SHIPMENT_STATE_SUPERSEDED"})
			continue
		}
		f.States = append(f.States, t)
	}
	switch n := req.GetPageSize(); {
	case n < 0 || n > maxShipmentPage:
		vs = append(vs, fieldViolation{"page_size", fmt.Sprintf("%d is outside 0 to %d (0 means 100)", n, maxShipmentPage)})
	case n == 0:
		f.Limit = 100
	default:
		f.Limit = int(n)
	}
	return f, vs
}

// listFilter decodes a ListShipments request: the filter, the page it continues from,
// and, for a trader, its own company (a trader sees its own company's records only).
func (s *Server) listFilter(ctx context.Context, req *halovetv1.ListShipmentsRequest) (store.ShipmentFilter, error) {
	f, vs := s.shipmentFilter(req)
	if len(vs) > 0 {
		return f, invalid(vs...)
	}
	if tok := req.GetPageToken(); tok != "" {
		after, err := s.openPageToken(ctx, "shipments", filterHash(req), tok)
		if errors.Is(err, errPageToken) {
			return f, invalid(fieldViolation{"page_token", err.Error()})
		}
		if err != nil {
			return f, toStatus(ctx, s.log, err)
		}
		f.AfterID = after
	}
	if own, scoped := callCompany(ctx); scoped {
		if f.CompanyID != "" && f.CompanyID != own {
			return f, outOfScope("company_id", f.CompanyID, own)
		}
		f.CompanyID = own
	}
	return f, nil
}

// ListShipments lists recorded shipments, a page at a time.
func (x *shipmentServer) ListShipments(ctx context.Context, req *halovetv1.ListShipmentsRequest) (*halovetv1.ListShipmentsResponse, error) {
	f, err := x.srv.listFilter(ctx, req)
	if err != nil {
		return nil, err
	}
	limit := f.Limit
	f.Limit = limit + 1 // one more tells whether there is a next page
	rows, err := x.srv.store.ListShipments(ctx, f)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	out := &halovetv1.ListShipmentsResponse{}
	if len(rows) > limit {
		rows = rows[:limit]
		if out.NextPageToken, err = x.srv.issuePageToken(ctx, "shipments", filterHash(req), rows[len(rows)-1].ID); err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
	}
	for i := range rows {
		r, err := recordedToProto(&rows[i])
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		out.Shipments = append(out.Shipments, r)
	}
	return out, nil
}

// GetShipment returns one recorded shipment and its versions.
func (x *shipmentServer) GetShipment(ctx context.Context, req *halovetv1.GetShipmentRequest) (*halovetv1.GetShipmentResponse, error) {
	if req.GetShipmentId() <= 0 {
		return nil, invalid(fieldViolation{"shipment_id", "is required: the id of a recorded shipment (ListShipments gives them)"})
	}
	got, versions, err := x.srv.store.GetShipment(ctx, req.GetShipmentId())
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	if own, scoped := callCompany(ctx); scoped && got.CompanyID != own {
		return nil, outOfScope("shipment_id", got.CompanyID, own)
	}
	out := &halovetv1.GetShipmentResponse{}
	if out.Shipment, err = recordedToProto(&got); err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	for i := range versions {
		v, err := recordedToProto(&versions[i])
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		out.Versions = append(out.Versions, v)
	}
	return out, nil
}

// VoidShipment voids a live recorded shipment.
func (x *shipmentServer) VoidShipment(ctx context.Context, req *halovetv1.VoidShipmentRequest) (*halovetv1.VoidShipmentResponse, error) {
	var vs []fieldViolation
	if req.GetShipmentId() <= 0 {
		vs = append(vs, fieldViolation{"shipment_id", "is required: the id of a live recorded shipment"})
	}
	if p := reasonProblem(req.GetReason()); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	got, err := x.srv.ships.VoidShipment(ctx, req.GetShipmentId(), strings.TrimSpace(req.GetReason()))
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	row := got.Row.(store.StoredShipment)
	r, err := recordedToProto(&row)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.VoidShipmentResponse{Shipment: r}, nil
}

// CorrectShipment replaces a live recorded shipment by a corrected version.
func (x *shipmentServer) CorrectShipment(ctx context.Context, req *halovetv1.CorrectShipmentRequest) (*halovetv1.CorrectShipmentResponse, error) {
	var vs []fieldViolation
	if req.GetRecord() == nil {
		vs = append(vs, fieldViolation{"record", "is required: the corrected record"})
	}
	if req.GetShipmentId() < 0 {
		vs = append(vs, fieldViolation{"shipment_id", "is negative; give the id of a live recorded shipment, or 0 for the live one of the record's company and key"})
	}
	if p := reasonProblem(req.GetReason()); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	c, err := x.srv.ships.CorrectShipment(ctx, ledgerCaller(ctx), ledger.Correction{ShipmentID: req.GetShipmentId(),
		Record: recordFromProto(req.GetRecord()), Encode: recordJSON(req.GetRecord()), Reason: strings.TrimSpace(req.GetReason())})
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	got, _, err := x.srv.store.GetShipment(ctx, c.ShipmentID)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	rs, err := recordedToProto(&got)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.CorrectShipmentResponse{Verdict: answerToProto(&c.Answer), Shipment: rs}, nil
}

// Closed years ----------------------------------------------------------------------------

func closedYearToProto(c store.ClosedYear) *halovetv1.ClosedYear {
	return &halovetv1.ClosedYear{Year: int32(c.Year), ClosedAt: rfc3339(c.ClosedAt), ClosedBy: c.ClosedBy, Reason: c.Reason}
}

func yearReasonViolations(year int32, reason string) []fieldViolation {
	var vs []fieldViolation
	if year < 1986 || year > 2200 {
		vs = append(vs, fieldViolation{"year", fmt.Sprintf("%d is outside 1986 to 2200", year)})
	}
	if p := reasonProblem(reason); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	return vs
}

// CloseYear closes a reporting year.
func (x *shipmentServer) CloseYear(ctx context.Context, req *halovetv1.CloseYearRequest) (*halovetv1.CloseYearResponse, error) {
	if vs := yearReasonViolations(req.GetYear(), req.GetReason()); len(vs) > 0 {
		return nil, invalid(vs...)
	}
	c, err := x.srv.ships.CloseYear(ctx, int(req.GetYear()), strings.TrimSpace(req.GetReason()))
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.CloseYearResponse{ClosedYear: closedYearToProto(store.ClosedYear(c))}, nil
}

// ReopenYear reopens a closed reporting year.
func (x *shipmentServer) ReopenYear(ctx context.Context, req *halovetv1.ReopenYearRequest) (*halovetv1.ReopenYearResponse, error) {
	if vs := yearReasonViolations(req.GetYear(), req.GetReason()); len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := x.srv.ships.ReopenYear(ctx, int(req.GetYear()), strings.TrimSpace(req.GetReason())); err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.ReopenYearResponse{}, nil
}

// ListClosedYears lists the closed reporting years.
func (x *shipmentServer) ListClosedYears(ctx context.Context, req *halovetv1.ListClosedYearsRequest) (*halovetv1.ListClosedYearsResponse, error) {
	pg, vs, err := x.srv.openPage(ctx, "closed-years", req)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	cs, err := x.srv.store.ClosedYearsPage(ctx, pg)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	out := &halovetv1.ListClosedYearsResponse{}
	if cs, out.NextPageToken, err = closePage(ctx, x.srv, "closed-years", req, pg, cs); err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	for _, c := range cs {
		out.ClosedYears = append(out.ClosedYears, closedYearToProto(c))
	}
	return out, nil
}
