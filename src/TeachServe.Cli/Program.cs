Console.WriteLine("teachserve");
