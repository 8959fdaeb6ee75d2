using System.Globalization;
using Microsoft.Extensions.Options;
using Serilog;
using SiloWatch.Service.Hosting;

Log.Logger = new LoggerConfiguration()
    .WriteTo.Console(formatProvider: CultureInfo.InvariantCulture)
    .CreateBootstrapLogger();

try
{
    var app = SiloWatchApp.Build(args);
    await app.RunAsync();
    return 0;
}
catch (PlantDefinitionException ex)
{
    foreach (var finding in ex.Findings)
    {
        Log.Fatal("Plant definition: {Finding}", finding.ToString());
    }

    Log.Fatal("{Count} finding(s) in {Path}: SiloWatch does not start. Check it with `silowatch verify --plant {Path}`",
        ex.Findings.Count, ex.Path, ex.Path);
    return 2;
}
catch (OptionsValidationException ex)
{
    foreach (var failure in ex.Failures)
    {
        Log.Fatal("Configuration: {Failure}", failure);
    }

    return 2;
}
catch (Exception ex)
{
    Log.Fatal(ex, "SiloWatch stopped unexpectedly");
    return 1;
}
finally
{
    await Log.CloseAndFlushAsync();
}
