using System.CommandLine;
using SiloWatch.Cli;

var root = new RootCommand("silowatch: tools for the SiloWatch silo monitoring service")
{
    VerifyCommand.Create(),
    ProfileCommand.Create(),
    AlarmsCommand.Create(),
    EventsCommand.Create(),
};

return await root.Parse(args).InvokeAsync();
