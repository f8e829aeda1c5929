package main

import (
	"context"
	"fmt"

	"github.com/spf13/pflag"
)

func init() {
	addVerb("verify", "check the stored ledger's invariants (quota lines and draws); exit 1 on any breach", verifyUsage, defineVerify)
}

const verifyUsage = `verify [flags]

Reads the database directly, in one read-only snapshot, and checks that for every quota
line the drawn amount equals the exact sum of its draws and lies within the allocation,
and that every draw of a recorded shipment is on the shipment's own licence and no larger
than the shipment's figure (metric t, ODP t or CO2-eq t) for its components in the line's
scope. Prints what it checked and every breach; exits 0 when all hold, 1 on any breach,
3 when the database cannot be reached. Meant for operators, after an incident and at the
end of every fault test.`

func defineVerify(fs *pflag.FlagSet) runFunc {
	var d dbFlags
	d.register(fs)
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		log, err := newLogger(envOr("HALOVET_LOG_FORMAT", "text"), envOr("HALOVET_LOG_LEVEL", "warn"))
		if err != nil {
			return err
		}
		db, err := openDatabase(ctx, d, false, log)
		if err != nil {
			return err
		}
		defer db.Close()
		rep, err := db.Store.CheckInvariants(ctx)
		if err != nil {
			return err
		}
		fmt.Printf("checked %d quota lines and %d draws\n", rep.QuotaLines, rep.Draws)
		for _, b := range rep.Breaches {
			fmt.Printf("BREACH %s: %s: %s\n", b.Invariant, b.Subject, b.Detail)
		}
		if len(rep.Breaches) > 0 {
			return &exitError{code: exitRejected, err: fmt.Errorf("%d breaches of the ledger's invariants", len(rep.Breaches))}
		}
		fmt.Println("every invariant holds")
		return nil
	}
}
