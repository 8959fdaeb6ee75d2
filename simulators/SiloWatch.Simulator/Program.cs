Console.WriteLine("simulator");
