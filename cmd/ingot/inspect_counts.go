package main

import (
	"fmt"
	"os"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
)

// runInspectCounts shows a binary count file: its header and end record,
// or with --dump its entries in the text form.
func runInspectCounts(cmd *cobra.Command, path string, f *inspectFlags) error {
	if f.stats || cmd.Flags().Changed("next") || cmd.Flags().Changed("prefix") {
		return fmt.Errorf("inspect: %s is a count file: only --dump [--order K] and --json apply", path)
	}
	info, err := counts.Describe(path)
	if err != nil {
		return fmt.Errorf("inspect: %w", err)
	}
	if cmd.Flags().Changed("order") && (f.order < 1 || f.order > info.Order) {
		return fmt.Errorf("inspect: --order %d outside the count file's orders 1..%d", f.order, info.Order)
	}
	out := cmd.OutOrStdout()
	if f.dump {
		file, err := os.Open(path)
		if err != nil {
			return fmt.Errorf("inspect: %w", err)
		}
		defer file.Close()
		if err := counts.Dump(out, path, file, f.order); err != nil {
			return fmt.Errorf("inspect: %w", err)
		}
		return nil
	}
	if f.asJSON {
		type orderJSON struct {
			Order    int    `json:"order"`
			Entries  uint64 `json:"entries"`
			CountSum uint64 `json:"count_sum"`
		}
		v := struct {
			File          string      `json:"file"`
			Kind          string      `json:"kind"`
			Size          int64       `json:"file_bytes"`
			LayoutVersion int         `json:"layout_version"`
			Order         int         `json:"order"`
			Words         int         `json:"words"`
			Blocks        uint64      `json:"blocks"`
			Orders        []orderJSON `json:"orders"`
		}{path, "counts", info.Size, info.LayoutVersion, info.Order, info.Words, info.Totals.Blocks, nil}
		for k := range info.Totals.Entries {
			v.Orders = append(v.Orders, orderJSON{k + 1, info.Totals.Entries[k], info.Totals.Sums[k]})
		}
		return writeJSON(out, v)
	}
	fmt.Fprintf(out, "count file      %s\n", path)
	fmt.Fprintf(out, "layout          binary counts, version %d, %d bytes\n", info.LayoutVersion, info.Size)
	fmt.Fprintf(out, "orders          1..%d\n", info.Order)
	fmt.Fprintf(out, "words           %d\n", info.Words)
	fmt.Fprintf(out, "blocks          %d\n", info.Totals.Blocks)
	tw := tabwriter.NewWriter(out, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "order\tentries\tsum of counts\t")
	for k := range info.Totals.Entries {
		fmt.Fprintf(tw, "%d\t%d\t%d\t\n", k+1, info.Totals.Entries[k], info.Totals.Sums[k])
	}
	return tw.Flush()
}
