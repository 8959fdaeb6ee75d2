return await SiloWatch.Simulator.Cli.SimulatorCommandLine.RunAsync(args, Console.Out, Console.Error);
