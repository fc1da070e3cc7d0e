// Benchmarks run on demand, never as part of Tests/run.sh:
//   dotnet run -c Release --project Tests/Benchmarks -- <name>     (no name: list them)
// Each prints a table of medians measured side by side in one run.
using Runfold.Benchmarks;

return BenchmarkRegistry.Run(args);
