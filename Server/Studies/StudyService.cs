using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Runfold.Server.Runs;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>Creating, listing and reading studies, for the API and the pages alike. Every method checks the
/// caller's role.</summary>
public sealed class StudyService(RunfoldDbContext db, TimeProvider time, RunfoldSettings settings)
{
    public async Task<IReadOnlyList<StudySummary>> ListAsync(Caller caller, CancellationToken cancellationToken)
    {
        var studies = await db.VisibleTo(caller).AsNoTracking()
            .OrderByDescending(s => s.CreatedAt)
            .Select(s => new { s.Id, s.Name, s.CreatedAt, s.LastActivityAt })
            .ToListAsync(cancellationToken);
        var ids = studies.Select(s => s.Id).ToList();
        var counts = await db.Runs.Where(r => ids.Contains(r.StudyId))
            .GroupBy(r => new { r.StudyId, r.State })
            .Select(g => new { g.Key.StudyId, g.Key.State, Count = g.Count() })
            .ToListAsync(cancellationToken);
        var byStudy = counts.ToLookup(c => c.StudyId, c => (c.State, c.Count));
        // The newest event and the newest snapshot of each study: one indexed lookup per study inside one query each.
        var lastEvents = await db.AuditEvents.AsNoTracking()
            .Where(e => e.StudyId != null && ids.Contains(e.StudyId.Value)
                        && e.Id == db.AuditEvents.Where(x => x.StudyId == e.StudyId).Max(x => x.Id))
            .Select(e => new { StudyId = e.StudyId!.Value, e.At, e.Detail })
            .ToDictionaryAsync(e => e.StudyId, cancellationToken);
        var snapshots = await db.AnalysisSnapshots.AsNoTracking()
            .Where(a => ids.Contains(a.StudyId)
                        && a.Version == db.AnalysisSnapshots.Where(x => x.StudyId == a.StudyId).Max(x => x.Version))
            .Select(a => new { a.StudyId, a.PayloadJson })
            .ToDictionaryAsync(a => a.StudyId, a => a.PayloadJson, cancellationToken);
        return [.. studies.Select(s =>
        {
            var last = lastEvents.GetValueOrDefault(s.Id);
            var lastAt = last is null ? s.LastActivityAt : s.LastActivityAt is { } bumped && bumped > last.At ? bumped : last.At;
            return new StudySummary(s.Id, s.Name, byStudy[s.Id].ToCounts(), s.CreatedAt, lastAt, last?.Detail,
                snapshots.TryGetValue(s.Id, out var payload) ? BestCandidates.FromSnapshot(payload) : null);
        })];
    }

    public async Task<Outcome<StudyDetail>> GetAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        if (await db.RoleAsync(caller, studyId, cancellationToken) is not { } role)
            return Outcome<StudyDetail>.NotFound(StudyAccess.NotVisible(studyId));
        return Outcome<StudyDetail>.Ok(await LoadDetailAsync(studyId, cancellationToken) with { YourRole = role });
    }

    /// <summary>Validates the definition and the design, then stores the study, its wave-1 runs, the creator's
    /// lead membership and an audit event in one transaction — or nothing.</summary>
    public async Task<Outcome<StudyDetail>> CreateAsync(Caller caller, CreateStudyRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (!caller.IsAdmin) return Outcome<StudyDetail>.Forbidden("Only the admin creates studies; ask them to create one and add you to it.");

        var definition = StudyRules.Check(request);
        if (!definition.IsValid) return Outcome<StudyDetail>.Invalid(definition.Errors);
        var (name, description, factors, responses) = definition.Value!;
        var design = DesignBuilder.Build(factors, request!.Design, new DesignLimits(settings.MaxRuns));
        if (!design.IsOk) return design.As<StudyDetail>();
        var matrix = design.Value!.Matrix;

        var now = time.GetUtcNow();
        var study = new Study
        {
            Name = name,
            Description = description,
            CreatedAt = now,
            CreatedById = caller.UserId,
            LastActivityAt = now,
            DesignJson = JsonSerializer.Serialize(request.Design, RunfoldJson.Options),
            Factors = [.. factors.Factors.Select(f => f.ToEntity())],
            Responses = [.. responses.Responses.Select(r => r.ToEntity())],
            Members = [new StudyMember { UserId = caller.UserId, Role = StudyRole.Lead, AddedAt = now }],
        };
        var wave = new Wave { Number = 1, Kind = WaveKind.Initial, CreatedAt = now, CreatedById = caller.UserId, RequestJson = study.DesignJson };
        study.Waves.Add(wave);

        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        db.Studies.Add(study);
        await db.SaveChangesAsync(cancellationToken);
        var number = 0;
        foreach (var row in matrix.NaturalRows())
            db.Runs.Add(new Run { StudyId = study.Id, WaveId = wave.Id, Number = ++number, State = RunState.Open, FactorValues = row, UpdatedAt = now });
        db.AuditEvents.Add(new AuditEvent
        {
            StudyId = study.Id,
            ActorId = caller.UserId,
            ApiTokenId = caller.ApiTokenId,
            Source = caller.Source,
            Kind = "study.created",
            Detail = $"{caller.UserName} created the study with {matrix.RunCount} runs ({string.Join(" ", design.Value.Notes)})",
            At = now,
        });
        await db.SaveChangesAsync(cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();

        var detail = await LoadDetailAsync(study.Id, cancellationToken);
        var runs = await new RunQueries(db).ListAsync(study.Id, null, cancellationToken);
        return Outcome<StudyDetail>.Ok(detail with { Runs = runs, YourRole = StudyRole.Lead });
    }

    /// <summary>The study with its definition, counts and members, without a role check (callers check).</summary>
    internal async Task<StudyDetail> LoadDetailAsync(int studyId, CancellationToken cancellationToken)
    {
        var study = await db.Studies.AsNoTracking().AsSplitQuery()
            .Include(s => s.Factors)
            .Include(s => s.Responses)
            .Include(s => s.Members).ThenInclude(m => m.User)
            .FirstAsync(s => s.Id == studyId, cancellationToken);
        var counts = await db.Runs.Where(r => r.StudyId == studyId)
            .GroupBy(r => r.State).Select(g => new { State = g.Key, Count = g.Count() })
            .ToListAsync(cancellationToken);
        return new StudyDetail(
            study.Id,
            study.Name,
            study.Description,
            [.. study.Factors.OrderBy(f => f.Position).Select(f => f.ToSpec())],
            [.. study.Responses.OrderBy(r => r.Position).Select(r => r.ToSpec())],
            JsonSerializer.Deserialize<DesignSpec>(study.DesignJson, RunfoldJson.Options)!,
            counts.Select(c => (c.State, c.Count)).ToCounts(),
            [.. study.Members.OrderByDescending(m => m.Role).ThenBy(m => m.User!.UserName)
                .Select(m => new StudyMemberDto(m.UserId, m.User!.UserName ?? "", m.User.DisplayName, m.Role))],
            study.LeaseHours,
            study.CreatedAt);
    }
}
