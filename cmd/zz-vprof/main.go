package main

import (
	"context"
	"fmt"
	"os"
	"runtime/pprof"
	"time"

	"hulltally/configs"
	"hulltally/ledger"
)

func main() {
	ctx := context.Background()
	cfg, err := configs.Load(configs.Options{})
	if err != nil {
		panic(err)
	}
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		panic(err)
	}
	defer l.Close()
	f, _ := os.Create("/tmp/verify.prof")
	pprof.StartCPUProfile(f)
	t0 := time.Now()
	r, err := l.VerifyWith(ctx, ledger.VerifyOptions{})
	pprof.StopCPUProfile()
	fmt.Println(time.Since(t0), err, r.OK, r.Records)
	var mb float64
	l.Pool().QueryRow(ctx, "SELECT sum(length(data))/1e6 FROM reading_blocks").Scan(&mb)
	fmt.Println("block MB", mb)
}
