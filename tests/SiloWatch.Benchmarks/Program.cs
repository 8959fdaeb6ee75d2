using BenchmarkDotNet.Running;
using SiloWatch.Benchmarks;

// Load drivers print figures of their own; everything else is BenchmarkDotNet (pick with --filter).
if (args.Length > 0 && args[0] == "ingest-load")
{
    return await IngestLoadDriver.RunAsync(args[1..]);
}

BenchmarkSwitcher.FromAssembly(typeof(IngestLoadDriver).Assembly).Run(args);
return 0;
