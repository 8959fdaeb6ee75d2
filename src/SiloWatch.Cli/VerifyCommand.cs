using System.CommandLine;
using SiloWatch.Plant;

namespace SiloWatch.Cli;

/// <summary>`silowatch verify`: lists every finding in the plant definition, as the service would at start-up.</summary>
internal static class VerifyCommand
{
    public static Command Create()
    {
        var plantOption = CliOptions.Plant();
        var command = new Command("verify", "Check the plant definition and print every finding, without starting the service")
        {
            plantOption,
        };
        command.SetAction(parse =>
        {
            var file = parse.GetValue(plantOption)!;
            var (plant, findings) = PlantLoader.LoadFile(file.FullName);
            foreach (var finding in findings)
            {
                Console.Out.WriteLine(finding.ToString());
            }

            if (findings.Count > 0)
            {
                Console.Out.WriteLine($"{findings.Count} finding(s) in {file.FullName}");
                return 1;
            }

            var silos = plant.Sites.Sum(s => s.Silos.Count);
            var sensors = plant.Sites.Sum(s => s.Silos.Sum(x => x.Sensors.Count));
            Console.Out.WriteLine($"{file.FullName}: {plant.Sites.Count} site(s), {silos} silo(s), {sensors} sensor(s): no findings");
            foreach (var silo in plant.Sites.SelectMany(s => s.Silos.Select(x => (Site: s, Silo: x))).Where(x => !x.Silo.AlarmLimits.EngineerApproved))
            {
                Console.Out.WriteLine($"caution: site '{silo.Site.Id}' silo '{silo.Silo.Id}': alarm limits are placeholders until a licensed structural engineer sets them");
            }

            return 0;
        });
        return command;
    }
}
