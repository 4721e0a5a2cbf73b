package main

import (
	"fmt"
	"os"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
	"ingot/inspect"
)

// runInspectCounts shows a binary count file: its header and end record,
// or with --dump its entries in the text form.
func runInspectCounts(cmd *cobra.Command, path string, f *inspectFlags) error {
	if f.stats || cmd.Flags().Changed("next") || cmd.Flags().Changed("prefix") {
		return fmt.Errorf("inspect: %s is a count file: only --dump [--order K] and --json apply", path)
	}
	info, err := inspect.DescribeCounts(path)
	if err != nil {
		return fmt.Errorf("inspect: %w", err)
	}
	if cmd.Flags().Changed("order") {
		if err := info.CheckOrder(f.order); err != nil {
			return fmt.Errorf("inspect: --order: %w", err)
		}
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
		return writeJSON(out, info)
	}
	fmt.Fprintf(out, "count file      %s\n", path)
	fmt.Fprintf(out, "layout          binary counts, version %d, %d bytes\n", info.LayoutVersion, info.FileBytes)
	fmt.Fprintf(out, "orders          1..%d\n", info.Order)
	fmt.Fprintf(out, "words           %d\n", info.VocabularySize)
	fmt.Fprintf(out, "blocks          %d\n", info.Blocks)
	tw := tabwriter.NewWriter(out, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "order\tentries\tsum of counts\t")
	for k := range info.NGramsPerOrder {
		fmt.Fprintf(tw, "%d\t%d\t%d\t\n", k+1, info.NGramsPerOrder[k], info.CountSumPerOrder[k])
	}
	return tw.Flush()
}
