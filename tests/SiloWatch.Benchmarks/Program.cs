using BenchmarkDotNet.Running;

// Every benchmark of the project; pick with --filter, e.g. --filter '*Decode*'.
// Load drivers that print figures of their own are separate commands: see DEVELOPERS.md.
BenchmarkSwitcher.FromAssembly(typeof(Program).Assembly).Run(args);
