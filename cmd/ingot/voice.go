package main

import (
	"fmt"
	"regexp"
	"strings"

	"github.com/spf13/cobra"

	"ingot/format"
)

// inOurVoice words the framework's own refusals (a wrong number of
// arguments, an unknown command) like every other message, and gives the
// commands the framework adds (help, completion) an example.
func inOurVoice(root *cobra.Command) {
	root.SetVersionTemplate(versionLine())
	root.InitDefaultHelpCmd()
	root.InitDefaultCompletionCmd()
	for _, c := range root.Commands() {
		switch c.Name() {
		case "completion":
			c.Example = `  ingot completion bash > /etc/bash_completion.d/ingot
  ingot completion zsh > "${fpath[1]}/_ingot"`
			// The framework prints its help and exits 0 for a shell it
			// does not know; refuse it like any other bad argument.
			c.Args = cobra.ArbitraryArgs
			c.RunE = func(c *cobra.Command, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("unknown shell %q (bash, zsh, fish or powershell)", args[0])
				}
				return c.Help()
			}
		case "help":
			c.Example = "  ingot help prune"
			// The framework prints "Unknown help topic" and exits 0.
			c.Run = nil
			c.RunE = func(c *cobra.Command, args []string) error {
				target, rest, err := root.Find(args)
				if err != nil || target == nil || len(rest) > 0 {
					return fmt.Errorf("unknown command %q (see 'ingot --help' for the commands)", strings.Join(args, " "))
				}
				target.InitDefaultHelpFlag()
				return target.Help()
			}
		}
		if check := c.Args; check != nil {
			c.Args = func(c *cobra.Command, args []string) error {
				if err := check(c, args); err != nil {
					return fmt.Errorf("%d argument(s) given; usage: %s %s", len(args), root.Name(), c.Use)
				}
				return nil
			}
		}
	}
}

// errorLine is the one line every failure prints: "ingot: COMMAND: what and
// where", whoever made the error (a package, the command, or the command
// line framework: an unknown flag, a missing argument). A prefix the
// message already carries (the program's or the command's name) is not
// repeated.
func errorLine(root, cmd *cobra.Command, err error) string {
	msg := err.Error()
	if cmd == nil || cmd == root {
		// The framework's refusal of an unknown command names the program
		// at the end; say it once, at the start.
		if strings.HasPrefix(msg, "unknown command ") {
			msg = strings.TrimSuffix(msg, fmt.Sprintf(" for %q", root.Name())) + " (see 'ingot --help' for the commands)"
		}
		return root.Name() + ": " + msg
	}
	path := cmd.CommandPath()
	for _, p := range []string{root.Name() + ": ", cmd.Name() + ": "} {
		for strings.HasPrefix(msg, p) {
			msg = msg[len(p):]
		}
	}
	msg = strings.TrimSuffix(msg, fmt.Sprintf(" for %q", path))
	if m := requiredFlags.FindStringSubmatch(msg); m != nil {
		var names []string
		for _, q := range regexp.MustCompile(`"([^"]+)"`).FindAllStringSubmatch(m[1], -1) {
			names = append(names, "--"+q[1])
		}
		verb := "is"
		if len(names) > 1 {
			verb = "are"
		}
		msg = fmt.Sprintf("%s %s required (see '%s --help')", strings.Join(names, " and "), verb, path)
	}
	return root.Name() + ": " + strings.TrimPrefix(path, root.Name()+" ") + ": " + msg
}

// requiredFlags matches the framework's refusal of missing required flags.
var requiredFlags = regexp.MustCompile(`^required flag\(s\) (.*) not set$`)

// renamedFlags maps "COMMAND --old" to the flag's name since version 0.2,
// so that a script using an old spelling fails with a pointer to the new.
var renamedFlags = map[string]string{
	"prune --threshold":         "--drop-below",
	"tradeoff --thresholds":     "--drop-below",
	"quantize --bow-bits":       "--backoff-bits",
	"prune --bow-bits":          "--backoff-bits",
	"verify --max-ppl-increase": "--max-perplexity-increase",
}

// flagProblem words the framework's refusal of a flag's value in our
// terms: the flag, the value and what it should be, without the parser's
// internals ("strconv.ParseInt: parsing ...: invalid syntax").
func flagProblem(err error) string {
	msg := err.Error()
	if m := badFlagValue.FindStringSubmatch(msg); m != nil {
		value, flag, why := m[1], m[2], m[3]
		want := "a valid value"
		switch {
		case strings.Contains(why, "ParseUint"):
			want = "a whole number, 0 or more"
		case strings.Contains(why, "ParseInt"):
			want = "a whole number"
		case strings.Contains(why, "ParseFloat"):
			want = "a number"
		case strings.Contains(why, "ParseBool"):
			want = "true or false"
		}
		if strings.Contains(why, "out of range") {
			want += " in range"
		}
		return fmt.Sprintf("%s %q: want %s", flag, value, want)
	}
	if m := missingFlagValue.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("%s needs a value", m[1])
	}
	return msg
}

var (
	badFlagValue     = regexp.MustCompile(`^invalid argument "(.*)" for "([^"]+)" flag: (.*)$`)
	missingFlagValue = regexp.MustCompile(`^flag needs an argument: (?:'.' in )?(-\S+)$`)
)

// renamedFlag returns the message for an unknown flag that was renamed.
func renamedFlag(c *cobra.Command, err error) (string, bool) {
	old, ok := strings.CutPrefix(err.Error(), "unknown flag: ")
	if !ok {
		return "", false
	}
	renamed, ok := renamedFlags[c.Name()+" "+old]
	if !ok {
		return "", false
	}
	return fmt.Sprintf("%s is now called %s", old, renamed), true
}

// versionLine is what --version prints: the tool's version and the model
// file format versions it reads and writes.
func versionLine() string {
	oldest, newest := format.ReadVersions()
	floats, quantized := format.WrittenVersions()
	writes := fmt.Sprintf("%d", floats)
	if quantized != floats {
		writes = fmt.Sprintf("%d (32-bit floats) and %d (quantized)", floats, quantized)
	}
	return fmt.Sprintf("ingot %s; model file format: reads versions %d to %d, writes %s\n", version, oldest, newest, writes)
}
