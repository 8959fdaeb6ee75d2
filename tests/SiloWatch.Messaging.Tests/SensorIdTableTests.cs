using System.Text;
using SiloWatch.Messaging.Tests.Support;

namespace SiloWatch.Messaging.Tests;

/// <summary>The decoder finds a sensor by the UTF-8 bytes of its id, without converting them to UTF-16.</summary>
public sealed class SensorIdTableTests
{
    [Fact]
    public void EverySensorOfEverySiloIsFoundByItsBytesAndNothingElseIs()
    {
        foreach (var silo in DemoPlant.Registry.Silos)
        {
            var table = new SensorIdTable(silo.Sensors);
            foreach (var sensor in silo.Sensors)
            {
                Assert.True(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id), out var index), sensor.Id);
                Assert.Equal(sensor.Index, index);
                Assert.False(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id + "x"), out _));
                Assert.False(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id.ToLowerInvariant()), out _));
            }

            Assert.False(table.TryGet([], out _));
            Assert.False(table.TryGet([0xC3, 0x28], out var none)); // not UTF-8
            Assert.Equal(-1, none);
        }
    }
}
