package main

import "github.com/spf13/cobra"

func newSizeCmd(s *streams, runF func() error) *cobra.Command {
	return &cobra.Command{Use: "size", Short: "Sample size, power and detectable effect", Hidden: true}
}
