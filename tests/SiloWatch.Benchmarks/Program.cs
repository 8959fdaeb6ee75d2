using BenchmarkDotNet.Running;
using SiloWatch.Benchmarks;

// Load drivers and accuracy reports print figures of their own:
//   ingest-load [messages] [samplesPerMessage] [rounds] [warmupRounds]   telemetry through Mosquitto: service vs bare subscriber
//   ingest-path [messages] [samplesPerMessage] [repeats]  the consumer's own cost per message, no network
//   inventory-accuracy [runs]                    mass error and interval coverage against simulated truth
//   scenario-accuracy [scenario.json ...]        estimates against the simulator's ground truth per scenario
//   detection [...]                              wall-load alarm detection rate, delay and false alarms
//   scale-load [--silos 400 --rate 20000 ...]    the demo plant scaled to hundreds of silos: samples/s, latency, memory per silo
//   plant-load [silos ...] [--rounds 5]          load + validate time of the demo plant copied to N silos (service start, verify)
// Everything else is BenchmarkDotNet (pick with --filter).
if (args.Length > 0 && args[0] is "scale-load" or "scale-load-run") return await ScaleLoadDriver.MainAsync(args);

if (args.Length > 0 && args[0] == "plant-load")
{
    return PlantLoadDriver.Run(args[1..]);
}

if (args.Length > 0 && args[0] == "ingest-load")
{
    return await IngestLoadDriver.RunAsync(args[1..]);
}

if (args.Length > 0 && args[0] == "ingest-path")
{
    return await IngestLoadDriver.RunPathAsync(args[1..]);
}

if (args.Length > 0 && args[0] == "inventory-accuracy")
{
    var runs = args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 8;
    Console.WriteLine(InventoryAccuracy.Run(runs));
    return 0;
}

if (args.Length > 0 && args[0] == "scenario-accuracy")
{
    return ScenarioAccuracyDriver.Run(args[1..]);
}

if (args.Length > 0 && args[0] == "detection")
{
    return DetectionDriver.Run(args[1..]);
}

BenchmarkSwitcher.FromAssembly(typeof(IngestLoadDriver).Assembly).Run(args);
return 0;
