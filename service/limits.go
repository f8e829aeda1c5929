package service

import (
	"context"
	"fmt"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/encoding"
	_ "google.golang.org/grpc/encoding/proto" // registers the "proto" codec wrapped below
	"google.golang.org/grpc/keepalive"
	"google.golang.org/grpc/mem"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/types/known/durationpb"
)

// Limits bound what one client can make the server hold or do. A zero field takes the
// value of DefaultLimits; the defaults are meant to be safe on an open network.
type Limits struct {
	// MaxRecvMsgBytes is the largest request message accepted (larger: ResourceExhausted).
	MaxRecvMsgBytes int
	// MaxSendMsgBytes is the largest answer message sent.
	MaxSendMsgBytes int
	// MaxStreamsPerConn is the most concurrent calls on one connection (HTTP/2
	// SETTINGS_MAX_CONCURRENT_STREAMS); further calls wait for a free stream.
	MaxStreamsPerConn uint32
	// MaxInFlight is the most calls the server handles at once over all connections;
	// further calls are refused with ResourceExhausted and a retry delay. Health checks
	// are not counted.
	MaxInFlight int
	// MaxRecordsPerMessage is the most records one stream message may carry.
	MaxRecordsPerMessage int
	// UnaryDeadline is the deadline of a unary call whose caller set none.
	UnaryDeadline time.Duration
	// StreamDeadline is the deadline of a streaming call whose caller set none.
	StreamDeadline time.Duration
	// StreamIdle closes a streaming call that carried no message either way for this long.
	StreamIdle time.Duration
	// ConnIdle closes a connection without calls for this long (keepalive MaxConnectionIdle).
	ConnIdle time.Duration
	// ConnMaxAge asks a client to reconnect after this long (keepalive MaxConnectionAge);
	// calls then open get StreamDeadline to finish.
	ConnMaxAge time.Duration
	// KeepaliveTime is how long a connection may be silent before the server pings it;
	// KeepaliveTimeout how long it waits for the answer before closing it.
	KeepaliveTime    time.Duration
	KeepaliveTimeout time.Duration
	// MinPingInterval is the shortest interval between client pings the server tolerates
	// (more often: the connection is closed with ENHANCE_YOUR_CALM).
	MinPingInterval time.Duration
}

// DefaultLimits returns the limits a server has unless told otherwise.
func DefaultLimits() Limits {
	return Limits{
		MaxRecvMsgBytes:      4 << 20,
		MaxSendMsgBytes:      64 << 20,
		MaxStreamsPerConn:    100,
		MaxInFlight:          1000,
		MaxRecordsPerMessage: 4096,
		UnaryDeadline:        time.Minute,
		StreamDeadline:       2 * time.Hour,
		StreamIdle:           5 * time.Minute,
		ConnIdle:             15 * time.Minute,
		ConnMaxAge:           2 * time.Hour,
		KeepaliveTime:        2 * time.Minute,
		KeepaliveTimeout:     20 * time.Second,
		MinPingInterval:      20 * time.Second,
	}
}

// withDefaults fills zero fields from DefaultLimits.
func (l Limits) withDefaults() Limits {
	d := DefaultLimits()
	setInt := func(v *int, dv int) {
		if *v <= 0 {
			*v = dv
		}
	}
	setDur := func(v *time.Duration, dv time.Duration) {
		if *v <= 0 {
			*v = dv
		}
	}
	setInt(&l.MaxRecvMsgBytes, d.MaxRecvMsgBytes)
	setInt(&l.MaxSendMsgBytes, d.MaxSendMsgBytes)
	if l.MaxStreamsPerConn == 0 {
		l.MaxStreamsPerConn = d.MaxStreamsPerConn
	}
	setInt(&l.MaxInFlight, d.MaxInFlight)
	setInt(&l.MaxRecordsPerMessage, d.MaxRecordsPerMessage)
	setDur(&l.UnaryDeadline, d.UnaryDeadline)
	setDur(&l.StreamDeadline, d.StreamDeadline)
	setDur(&l.StreamIdle, d.StreamIdle)
	setDur(&l.ConnIdle, d.ConnIdle)
	setDur(&l.ConnMaxAge, d.ConnMaxAge)
	setDur(&l.KeepaliveTime, d.KeepaliveTime)
	setDur(&l.KeepaliveTimeout, d.KeepaliveTimeout)
	setDur(&l.MinPingInterval, d.MinPingInterval)
	return l
}

// serverOptions are the grpc options that enforce the limits.
func (l Limits) serverOptions() []grpc.ServerOption {
	return []grpc.ServerOption{
		grpc.MaxRecvMsgSize(l.MaxRecvMsgBytes),
		grpc.MaxSendMsgSize(l.MaxSendMsgBytes),
		grpc.MaxConcurrentStreams(l.MaxStreamsPerConn),
		grpc.KeepaliveParams(keepalive.ServerParameters{
			MaxConnectionIdle:     l.ConnIdle,
			MaxConnectionAge:      l.ConnMaxAge,
			MaxConnectionAgeGrace: l.StreamDeadline,
			Time:                  l.KeepaliveTime,
			Timeout:               l.KeepaliveTimeout,
		}),
		grpc.KeepaliveEnforcementPolicy(keepalive.EnforcementPolicy{
			MinTime:             l.MinPingInterval,
			PermitWithoutStream: true,
		}),
		grpc.ForceServerCodecV2(strictCodec{encoding.GetCodecV2("proto")}),
	}
}

// limiter counts the calls in flight.
type limiter struct {
	slots chan struct{}
}

func newLimiter(n int) *limiter { return &limiter{slots: make(chan struct{}, n)} }

func exempt(method string) bool { return strings.HasPrefix(method, "/grpc.health.v1.Health/") }

// acquire takes a slot or answers ResourceExhausted with a retry delay.
func (l *limiter) acquire(method string) (release func(), err error) {
	if exempt(method) {
		return func() {}, nil
	}
	select {
	case l.slots <- struct{}{}:
		return func() { <-l.slots }, nil
	default:
	}
	st := status.New(codes.ResourceExhausted, fmt.Sprintf("the server is handling %d calls, its limit; retry after a second", cap(l.slots)))
	if d, derr := st.WithDetails(&errdetails.RetryInfo{RetryDelay: durationpb.New(time.Second)}); derr == nil {
		st = d
	}
	return nil, st.Err()
}

func (s *Server) limitUnary(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
	release, err := s.inFlight.acquire(info.FullMethod)
	if err != nil {
		return nil, err
	}
	defer release()
	if _, ok := ctx.Deadline(); !ok {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, s.limits.UnaryDeadline)
		defer cancel()
	}
	return h(ctx, req)
}

func (s *Server) limitStream(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) error {
	release, err := s.inFlight.acquire(info.FullMethod)
	if err != nil {
		return err
	}
	defer release()
	ctx, cancel := context.WithCancel(ss.Context())
	defer cancel()
	if _, ok := ctx.Deadline(); !ok {
		ctx, cancel = context.WithTimeout(ctx, s.limits.StreamDeadline)
		defer cancel()
	}
	ls := &limitedStream{ServerStream: ss, ctx: ctx}
	ls.touch()
	idle := s.limits.StreamIdle
	var timer *time.Timer
	check := func() {
		left := idle - time.Duration(time.Now().UnixNano()-ls.last.Load())
		if left > 0 {
			timer.Reset(left)
			return
		}
		ls.idled.Store(true)
		cancel()
	}
	timer = time.AfterFunc(idle, check)
	defer timer.Stop()
	err = h(srv, ls)
	if ls.idled.Load() {
		return status.Errorf(codes.DeadlineExceeded, "the stream carried no message for %s; the server closed it; answers received before stand, send the rest on a new stream", idle)
	}
	return err
}

// limitedStream notes when a message last went either way and gives the handler the
// call's bounded context.
type limitedStream struct {
	grpc.ServerStream
	ctx   context.Context
	last  atomic.Int64 // unix nanoseconds
	idled atomic.Bool
}

func (l *limitedStream) touch()                   { l.last.Store(time.Now().UnixNano()) }
func (l *limitedStream) Context() context.Context { return l.ctx }

func (l *limitedStream) RecvMsg(m any) error {
	err := l.ServerStream.RecvMsg(m)
	l.touch()
	if err == nil {
		err = malformed(m)
	}
	return err
}

func (l *limitedStream) SendMsg(m any) error {
	err := l.ServerStream.SendMsg(m)
	l.touch()
	return err
}

// checkRecordsPerMessage refuses a stream message with more records than the limit.
func (s *Server) checkRecordsPerMessage(n int) error {
	if n <= s.limits.MaxRecordsPerMessage {
		return nil
	}
	return invalid(fieldViolation{"records", fmt.Sprintf("a stream message carries %d records; at most %d are accepted in one message", n, s.limits.MaxRecordsPerMessage)})
}

// strictCodec is the proto codec, except that a request that does not decode is answered
// InvalidArgument rather than grpc's Internal: its Unmarshal notes the failure against the
// message and succeeds, and the first interceptor (unary) or the stream wrapper (streams)
// turns the note into the answer.
type strictCodec struct{ encoding.CodecV2 }

// undecodable holds the decode errors of messages not yet handed to a handler.
var undecodable sync.Map // message pointer → error

func (c strictCodec) Unmarshal(data mem.BufferSlice, v any) error {
	err := c.CodecV2.Unmarshal(data, v)
	if err == nil {
		return nil
	}
	if m, ok := v.(proto.Message); ok {
		proto.Reset(m)
		undecodable.Store(v, err)
		return nil
	}
	return err
}

// malformed returns InvalidArgument when m did not decode.
func malformed(m any) error {
	e, bad := undecodable.LoadAndDelete(m)
	if !bad {
		return nil
	}
	return status.Errorf(codes.InvalidArgument, "the message is not a valid %T protocol buffer: %v", m, e)
}

// checkDecodedUnary comes first in the unary chain: a request that did not decode is
// answered InvalidArgument before anything else runs.
func checkDecodedUnary(ctx context.Context, req any, _ *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
	if err := malformed(req); err != nil {
		return nil, err
	}
	return h(ctx, req)
}
