using System.Diagnostics;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>Runs the `silowatch` command (src/SiloWatch.Cli, built with this project) as a child process and collects its output.</summary>
public static class CliProcess
{
    public sealed record Result(int ExitCode, string StandardOutput, string StandardError);

    public static string Locate()
    {
        // bin/<Configuration>/net10.0 of this project, mirrored in the CLI's project folder.
        var here = new DirectoryInfo(AppContext.BaseDirectory.TrimEnd(Path.DirectorySeparatorChar));
        var framework = here.Name;
        var configuration = here.Parent!.Name;
        var root = here.Parent.Parent!.Parent!.Parent!.Parent!.FullName;
        var dll = Path.Combine(root, "src", "SiloWatch.Cli", "bin", configuration, framework, "silowatch.dll");
        Assert.True(File.Exists(dll), $"the silowatch command is not built at {dll}");
        return dll;
    }

    public static async Task<Result> RunAsync(string workingDirectory, params string[] args)
    {
        var dotnet = Environment.GetEnvironmentVariable("DOTNET_HOST_PATH") is { Length: > 0 } host ? host : "dotnet";
        var info = new ProcessStartInfo(dotnet)
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
            WorkingDirectory = workingDirectory,
        };
        info.ArgumentList.Add(Locate());
        foreach (var a in args)
        {
            info.ArgumentList.Add(a);
        }

        using var process = Process.Start(info)!;
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        using var timeout = new CancellationTokenSource(TimeSpan.FromMinutes(2));
        await process.WaitForExitAsync(timeout.Token);
        return new Result(process.ExitCode, await stdout, await stderr);
    }
}
