using System.Diagnostics;
using System.Globalization;
using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Time to load and validate a plant file of N silos (the demo plant copied as for scale-load), the
/// way the service does at start and `silowatch verify` does: read the JSON, bind it to the options
/// model, validate it against the material library. Best and median of several rounds per size.
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- plant-load [silos ...] [--rounds 5]
/// </summary>
public static class PlantLoadDriver
{
    public static int Run(string[] args)
    {
        var sizes = new List<int>();
        var rounds = 5;
        for (var i = 0; i < args.Length; i++)
        {
            if (args[i] == "--rounds")
            {
                rounds = int.Parse(args[++i], CultureInfo.InvariantCulture);
            }
            else
            {
                sizes.Add(int.Parse(args[i], CultureInfo.InvariantCulture));
            }
        }

        if (sizes.Count == 0)
        {
            sizes.AddRange([4, 100, 400]);
        }

        var root = ScenarioAccuracyDriver.FindRepositoryRoot();
        var materials = MaterialLibrary.Load(Path.Combine(root, "config", "materials.json"));
        var folder = Directory.CreateTempSubdirectory("silowatch-plant-load-").FullName;
        try
        {
            // One small load first so that the first measured round does not pay for JIT and type loading.
            var (warm, _) = ScaleLoadDriver.WriteScaledPlant(root, folder, 4);
            PlantLoader.LoadFile(warm, materials.Names);

            Console.WriteLine($"plant-load: the demo plant copied to N silos, load (read, bind) + validate, {rounds} round(s), {Environment.ProcessorCount} cores");
            Console.WriteLine("silos  sensors  file kB  findings  load+validate best / median ms  validate alone best ms");
            foreach (var size in sizes)
            {
                var (path, _) = ScaleLoadDriver.WriteScaledPlant(root, folder, size);
                var totals = new List<double>();
                var validations = new List<double>();
                var findings = 0;
                var sensors = 0;
                for (var r = 0; r < rounds; r++)
                {
                    var clock = Stopwatch.StartNew();
                    var (plant, found) = PlantLoader.LoadFile(path, materials.Names);
                    totals.Add(clock.Elapsed.TotalMilliseconds);
                    findings = found.Count;
                    sensors = plant.Sites.Sum(s => s.Silos.Sum(x => x.Sensors.Count));

                    clock.Restart();
                    PlantValidator.Validate(plant, materials.Names);
                    validations.Add(clock.Elapsed.TotalMilliseconds);
                }

                totals.Sort();
                Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                    $"{size,5}  {sensors,7}  {new FileInfo(path).Length / 1024.0,7:F0}  {findings,8}  {totals[0],14:F1} / {totals[totals.Count / 2],-14:F1}  {validations.Min(),22:F2}"));
            }
        }
        finally
        {
            Directory.Delete(folder, recursive: true);
        }

        return 0;
    }
}
