package main

import (
	"context"
	"os"
	"strconv"
	"sync/atomic"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/keepalive"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// defaultClientTimeout is how long a client verb waits for the server unless --timeout says
// otherwise: the deadline of a unary call, and the longest a stream may go without a
// message either way.
const defaultClientTimeout = 2 * time.Minute

// maxClientRecvBytes is the largest answer the client takes; the server's default largest
// answer (service.DefaultLimits().MaxSendMsgBytes).
const maxClientRecvBytes = 64 << 20

func envInt(key string, def int) int {
	if v, ok := os.LookupEnv(key); ok && v != "" {
		if n, err := strconv.Atoi(v); err == nil {
			return n
		}
	}
	return def
}

// clientLimitOptions bound how long the client waits: a unary call without a deadline gets
// timeout; a stream is cancelled when no message went either way for timeout; keepalive
// pings find a connection whose server vanished.
func clientLimitOptions(timeout time.Duration) []grpc.DialOption {
	opts := []grpc.DialOption{
		grpc.WithDefaultCallOptions(grpc.MaxCallRecvMsgSize(maxClientRecvBytes)),
		// At least the server's default MinPingInterval (20 s), or the server closes the connection.
		grpc.WithKeepaliveParams(keepalive.ClientParameters{Time: time.Minute, Timeout: 20 * time.Second}),
	}
	if timeout <= 0 {
		return opts
	}
	unary := func(ctx context.Context, method string, req, reply any, cc *grpc.ClientConn, invoker grpc.UnaryInvoker, opts ...grpc.CallOption) error {
		_, had := ctx.Deadline()
		if !had {
			var cancel context.CancelFunc
			ctx, cancel = context.WithTimeout(ctx, timeout)
			defer cancel()
		}
		err := invoker(ctx, method, req, reply, cc, opts...)
		// The server learns the deadline too, and may be first to say it passed.
		if status.Code(err) == codes.DeadlineExceeded && !had {
			return status.Errorf(codes.DeadlineExceeded, "the server gave no answer within %s (--timeout)", timeout)
		}
		return err
	}
	stream := func(ctx context.Context, desc *grpc.StreamDesc, cc *grpc.ClientConn, method string, streamer grpc.Streamer, opts ...grpc.CallOption) (grpc.ClientStream, error) {
		ctx, cancel := context.WithCancel(ctx)
		ws := &watchedStream{timeout: timeout}
		ws.timer = time.AfterFunc(timeout, ws.check)
		ws.cancel = func() { ws.timer.Stop(); cancel() }
		ws.waitSince.Store(time.Now().UnixNano()) // the stream is owed to us while it opens
		cs, err := streamer(ctx, desc, cc, method, opts...)
		if err != nil {
			ws.cancel()
			return nil, ws.explain(err)
		}
		ws.waitSince.CompareAndSwap(ws.waitSince.Load(), 0)
		ws.ClientStream = cs
		return ws, nil
	}
	return append(opts, grpc.WithChainUnaryInterceptor(unary), grpc.WithChainStreamInterceptor(stream))
}

// watchedStream abandons a shipment stream when the server owes answers and sends none
// for the timeout. Each record sent is owed a verdict, and closing the send side a summary;
// a client that sends nothing (records trickling in through a pipe) owes the server
// nothing and is never cut.
type watchedStream struct {
	grpc.ClientStream
	timeout   time.Duration
	timer     *time.Timer
	cancel    func()
	owed      atomic.Int64 // answers the server owes
	waitSince atomic.Int64 // unix ns since when answers are owed without one arriving; 0: none owed
	silent    atomic.Bool
}

func (w *watchedStream) check() {
	if since := w.waitSince.Load(); since != 0 {
		if left := w.timeout - time.Duration(time.Now().UnixNano()-since); left <= 0 {
			w.silent.Store(true)
			w.cancel()
			return
		}
	}
	w.timer.Reset(w.timeout / 4)
}

func (w *watchedStream) owe(n int64) {
	if n > 0 && w.owed.Add(n) == n {
		w.waitSince.Store(time.Now().UnixNano())
	}
}

func (w *watchedStream) explain(err error) error {
	if err != nil && w.silent.Load() {
		return status.Errorf(codes.DeadlineExceeded, "the server sent no answer for %s (--timeout) while answers were due; the stream was abandoned", w.timeout)
	}
	return err
}

func (w *watchedStream) SendMsg(m any) error {
	err := w.ClientStream.SendMsg(m)
	if err == nil {
		w.owe(recordsIn(m))
	}
	return w.explain(err)
}

func (w *watchedStream) CloseSend() error {
	err := w.ClientStream.CloseSend()
	if err == nil {
		w.owe(1) // the summary
	}
	return err
}

func (w *watchedStream) RecvMsg(m any) error {
	err := w.ClientStream.RecvMsg(m)
	if err != nil {
		w.cancel() // the stream is over: stop the watch
		return w.explain(err)
	}
	if w.owed.Add(-answersIn(m)) <= 0 {
		w.owed.Store(0)
		w.waitSince.Store(0)
	} else {
		w.waitSince.Store(time.Now().UnixNano()) // progress: the clock starts again
	}
	return nil
}

// recordsIn counts the records of a shipment stream message (other messages count 1).
func recordsIn(m any) int64 {
	type records interface {
		GetRecord() *halovetv1.ShipmentRecord
		GetRecords() []*halovetv1.ShipmentRecord
	}
	if r, ok := m.(records); ok {
		n := int64(len(r.GetRecords()))
		if r.GetRecord() != nil {
			n++
		}
		return n
	}
	return 1
}

// answersIn counts the answers of a shipment stream message: verdicts, or 1 for the summary.
func answersIn(m any) int64 {
	type verdicts interface {
		GetVerdicts() *halovetv1.VerdictBatch
	}
	if v, ok := m.(verdicts); ok && v.GetVerdicts() != nil {
		return int64(len(v.GetVerdicts().GetVerdicts()))
	}
	return 1
}

// serveLimitFlags registers the server's limits as flags of halovet serve.
func serveLimitFlags(fs *pflag.FlagSet) func() service.Limits {
	d := service.DefaultLimits()
	recv := fs.Int("max-message-bytes", envInt("HALOVET_MAX_MESSAGE_BYTES", d.MaxRecvMsgBytes), "largest request message accepted, bytes (env HALOVET_MAX_MESSAGE_BYTES)")
	send := fs.Int("max-answer-bytes", envInt("HALOVET_MAX_ANSWER_BYTES", d.MaxSendMsgBytes), "largest answer message sent, bytes (env HALOVET_MAX_ANSWER_BYTES)")
	streams := fs.Int("max-streams-per-connection", envInt("HALOVET_MAX_STREAMS_PER_CONNECTION", int(d.MaxStreamsPerConn)), "concurrent calls on one connection (env HALOVET_MAX_STREAMS_PER_CONNECTION)")
	inFlight := fs.Int("max-calls", envInt("HALOVET_MAX_CALLS", d.MaxInFlight), "calls handled at once over all connections; more are refused with a retry delay (env HALOVET_MAX_CALLS)")
	perMsg := fs.Int("max-records-per-message", envInt("HALOVET_MAX_RECORDS_PER_MESSAGE", d.MaxRecordsPerMessage), "records one stream message may carry (env HALOVET_MAX_RECORDS_PER_MESSAGE)")
	unary := fs.Duration("call-deadline", envDuration("HALOVET_CALL_DEADLINE", d.UnaryDeadline), "deadline of a unary call whose caller set none (env HALOVET_CALL_DEADLINE)")
	streamDL := fs.Duration("stream-deadline", envDuration("HALOVET_STREAM_DEADLINE", d.StreamDeadline), "deadline of a streaming call whose caller set none (env HALOVET_STREAM_DEADLINE)")
	idle := fs.Duration("stream-idle", envDuration("HALOVET_STREAM_IDLE", d.StreamIdle), "a stream without a message either way for this long is closed (env HALOVET_STREAM_IDLE)")
	connIdle := fs.Duration("connection-idle", envDuration("HALOVET_CONNECTION_IDLE", d.ConnIdle), "a connection without calls for this long is closed (env HALOVET_CONNECTION_IDLE)")
	age := fs.Duration("connection-max-age", envDuration("HALOVET_CONNECTION_MAX_AGE", d.ConnMaxAge), "clients are asked to reconnect after this long; open calls get --stream-deadline to finish (env HALOVET_CONNECTION_MAX_AGE)")
	kaTime := fs.Duration("keepalive-time", envDuration("HALOVET_KEEPALIVE_TIME", d.KeepaliveTime), "a silent connection is pinged after this long (env HALOVET_KEEPALIVE_TIME)")
	kaTimeout := fs.Duration("keepalive-timeout", envDuration("HALOVET_KEEPALIVE_TIMEOUT", d.KeepaliveTimeout), "a ping unanswered for this long closes the connection (env HALOVET_KEEPALIVE_TIMEOUT)")
	return func() service.Limits {
		return service.Limits{
			MaxRecvMsgBytes: *recv, MaxSendMsgBytes: *send, MaxStreamsPerConn: uint32(max(*streams, 0)),
			MaxInFlight: *inFlight, MaxRecordsPerMessage: *perMsg,
			UnaryDeadline: *unary, StreamDeadline: *streamDL, StreamIdle: *idle,
			ConnIdle: *connIdle, ConnMaxAge: *age, KeepaliveTime: *kaTime, KeepaliveTimeout: *kaTimeout,
		}
	}
}
