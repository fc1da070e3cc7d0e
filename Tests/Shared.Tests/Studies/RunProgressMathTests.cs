using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Studies;

public sealed class RunProgressMathTests
{
    private static readonly DateTimeOffset T0 = new(2026, 12, 1, 8, 0, 0, TimeSpan.Zero);

    [Fact]
    public void The_burndown_counts_first_results_ignores_corrections_and_counts_reopened_runs_again()
    {
        var points = RunProgressMath.Burndown(
            [(T0, 4), (T0.AddHours(5), 2)],
            [
                new RunFinishEvent(1, T0.AddHours(1), true),
                new RunFinishEvent(2, T0.AddHours(2), true),
                new RunFinishEvent(2, T0.AddHours(2), true),   // a second revision at the same instant
                new RunFinishEvent(1, T0.AddHours(3), true),   // a correction of a finished run
                new RunFinishEvent(2, T0.AddHours(4), false),  // run 2 failed and is reopened
            ],
            T0.AddHours(6));
        Assert.Equal(
            [(0, 4, 4), (1, 3, 4), (2, 2, 4), (3, 2, 4), (4, 3, 4), (5, 5, 6), (6, 5, 6)],
            points.Select(p => ((int)(p.At - T0).TotalHours, p.Remaining, p.Total)));
    }

    [Fact]
    public void A_long_history_is_thinned_evenly_and_keeps_its_ends()
    {
        var events = Enumerable.Range(1, 5_000).Select(i => new RunFinishEvent(i, T0.AddMinutes(i), true));
        var points = RunProgressMath.Burndown([(T0, 5_000)], events, T0.AddDays(10), maxPoints: 100);
        Assert.Equal(100, points.Count);
        Assert.Equal(5_000, points[0].Remaining);
        Assert.Equal(0, points[^1].Remaining);
        Assert.Equal(T0.AddDays(10), points[^1].At);
    }

    [Fact]
    public void The_median_of_an_even_count_is_the_mean_of_the_middle_two()
    {
        Assert.Null(RunProgressMath.Median([]));
        Assert.Equal(TimeSpan.FromHours(3), RunProgressMath.Median([TimeSpan.FromHours(9), TimeSpan.FromHours(1), TimeSpan.FromHours(3)]));
        Assert.Equal(TimeSpan.FromHours(2.5), RunProgressMath.Median([TimeSpan.FromHours(4), TimeSpan.FromHours(1), TimeSpan.FromHours(2), TimeSpan.FromHours(3)]));
    }

    [Fact]
    public void The_finish_is_whole_rounds_of_the_median_run_per_person()
    {
        var estimate = RunProgressMath.Estimate(7, 3, [TimeSpan.FromHours(2), TimeSpan.FromHours(6), TimeSpan.FromHours(4)], T0);
        Assert.Equal(3, estimate.Rounds); // 7 runs over 3 people: 3, 2, 2
        Assert.Equal(4, estimate.MedianRunHours);
        Assert.Equal(T0.AddHours(12), estimate.ExpectedFinish);
    }

    [Theory]
    [InlineData(0, 2, 1)]  // nothing left
    [InlineData(5, 0, 1)]  // nobody working
    [InlineData(5, 2, 0)]  // no run timed yet
    public void There_is_no_finish_without_work_left_people_or_a_timed_run(int remaining, int people, int timed)
    {
        var estimate = RunProgressMath.Estimate(remaining, people, [.. Enumerable.Repeat(TimeSpan.FromHours(1), timed)], T0);
        Assert.Null(estimate.ExpectedFinish);
    }
}
