#!/usr/bin/env bash
# runfold-job.sh — run one (or more) runs of a Runfold study on a cluster node. Needs bash and curl, nothing else.
#
#   RUNFOLD_URL=https://runfold.example.org RUNFOLD_TOKEN_FILE=~/.config/runfold/token RUNFOLD_STUDY=12 \
#       runfold-job.sh -- ./run-case.sh
#
# For each run: claim it, write its factor values into the run folder (factors.json, factors.env), start the solver
# command there while heartbeats keep the claim alive, then read the results file the solver wrote and upload it
# with an Idempotency-Key — or, when the solver fails, upload a failed result with its exit code and the last
# lines of its log. Every call is retried on connection errors, 429 and 5xx, with the same idempotency key, so a
# server restart in the middle of a run stores the result exactly once. See deploy/hpc/README.md.
#
# Exit codes: 0 the outcome of every run was recorded (done or failed) or no run was open; 1 bad configuration;
# 2 the server could not be reached or refused the token; 3 the claim was lost (lease lapsed and the run was
# taken); 4 the server refused the results (recorded as failed with its reason); 143 stopped by a signal (the run
# was released for someone else).
set -uo pipefail

readonly PROGRAM="runfold-job"
say() { printf '[%s %s] %s\n' "$PROGRAM" "$(date -u +%Y-%m-%dT%H:%M:%SZ)" "$*" >&2; }
die() { local code=$1; shift; say "$*"; exit "$code"; }

usage() {
    cat >&2 <<'EOF'
usage: runfold-job.sh [--study ID] [--runs N] -- SOLVER [ARGS...]
  environment: RUNFOLD_URL, RUNFOLD_TOKEN or RUNFOLD_TOKEN_FILE, RUNFOLD_STUDY (or --study)
  optional:    RUNFOLD_RUNS (runs one after another; 0 = until none is open; default 1)
               RUNFOLD_WORKDIR (where run folders are made; default the current folder)
               RUNFOLD_RESULTS_FILE (name of the results file in the run folder; default results.txt)
               RUNFOLD_LEASE_HOURS, RUNFOLD_HEARTBEAT_SECONDS (default 600), RUNFOLD_LOG_LINES (default 20)
               RUNFOLD_RETRIES (default 8), RUNFOLD_RETRY_SECONDS (first back-off, doubling; default 5)
EOF
    exit 1
}

# --- configuration ----------------------------------------------------------------------------------------------
study="${RUNFOLD_STUDY:-}"
runs_wanted="${RUNFOLD_RUNS:-1}"
while [ $# -gt 0 ]; do
    case "$1" in
        --study) study="${2:-}"; shift 2 ;;
        --runs) runs_wanted="${2:-}"; shift 2 ;;
        --) shift; break ;;
        -h|--help) usage ;;
        *) break ;;
    esac
done
[ $# -gt 0 ] || { say "No solver command given."; usage; }
# The solver runs inside each run's folder: a relative path to it means relative to where the job started.
solver=$1; shift
case "$solver" in /*) ;; */*) solver="$PWD/$solver" ;; esac
set -- "$solver" "$@"

url="${RUNFOLD_URL:-}"
url="${url%/}"
[ -n "$url" ] || die 1 "Set RUNFOLD_URL to the Runfold server, for example https://runfold.example.org."
token="${RUNFOLD_TOKEN:-}"
if [ -z "$token" ] && [ -n "${RUNFOLD_TOKEN_FILE:-}" ]; then
    [ -r "$RUNFOLD_TOKEN_FILE" ] || die 1 "RUNFOLD_TOKEN_FILE=$RUNFOLD_TOKEN_FILE cannot be read."
    IFS= read -r token <"$RUNFOLD_TOKEN_FILE" || true
    token="${token%$'\r'}"
fi
[ -n "$token" ] || die 1 "Set RUNFOLD_TOKEN_FILE to a file holding your API token (or RUNFOLD_TOKEN)."
[[ "$study" =~ ^[0-9]+$ ]] || die 1 "Set RUNFOLD_STUDY (or --study) to the study's number; '$study' is not one."
[[ "$runs_wanted" =~ ^[0-9]+$ ]] || die 1 "RUNFOLD_RUNS must be a whole number (0 = until no run is open)."
workdir="${RUNFOLD_WORKDIR:-$PWD}"
results_name="${RUNFOLD_RESULTS_FILE:-results.txt}"
lease_hours="${RUNFOLD_LEASE_HOURS:-}"
heartbeat_seconds="${RUNFOLD_HEARTBEAT_SECONDS:-600}"
log_lines="${RUNFOLD_LOG_LINES:-20}"
retries="${RUNFOLD_RETRIES:-8}"
retry_seconds="${RUNFOLD_RETRY_SECONDS:-5}"
for n in heartbeat_seconds log_lines retries retry_seconds; do
    [[ "${!n}" =~ ^[0-9]+$ ]] || die 1 "RUNFOLD_$(printf '%s' "$n" | tr '[:lower:]' '[:upper:]') must be a whole number."
done
[ -z "$lease_hours" ] || [[ "$lease_hours" =~ ^[0-9]+([.][0-9]+)?$ ]] || die 1 "RUNFOLD_LEASE_HOURS must be a number of hours."
command -v curl >/dev/null || die 1 "curl is not installed on this node."
mkdir -p "$workdir" || die 1 "Cannot create RUNFOLD_WORKDIR=$workdir."

# The token goes to curl through a header file only this user can read, never on a command line (ps shows those).
state="$(mktemp -d "${TMPDIR:-/tmp}/runfold-job.XXXXXX")" || die 1 "Cannot create a temporary folder."
chmod 700 "$state"
printf 'Authorization: Bearer %s\n' "$token" >"$state/auth"
unset token RUNFOLD_TOKEN

heartbeat_pid=""
solver_pid=""
current_run=""
stop_heartbeat() {
    if [ -n "$heartbeat_pid" ]; then kill "$heartbeat_pid" 2>/dev/null; wait "$heartbeat_pid" 2>/dev/null; heartbeat_pid=""; fi
}
cleanup() { stop_heartbeat; rm -rf "$state"; }
trap cleanup EXIT

# --- JSON without jq --------------------------------------------------------------------------------------------
# json_flatten TEXT prints one "path<TAB>value" line per scalar: "0.id	17", "0.factors.fin_height	42.5".
# Strings are unescaped; the API's answers are small, so a plain scanner is enough.
readonly RE_ESCAPE='^([^\\]*)\\(.)(.*)$' RE_STRING='^"(([^"\\]|\\.)*)"' RE_SCALAR='^(-?[0-9][0-9.eE+-]*|true|false|null)'
json_unescape() {
    local s=$1 out="" hex ch
    while [[ "$s" =~ $RE_ESCAPE ]]; do
        out+="${BASH_REMATCH[1]}"
        s="${BASH_REMATCH[3]}"
        case "${BASH_REMATCH[2]}" in
            n) out+=$'\n' ;; t) out+=$'\t' ;; r) out+=$'\r' ;; b) out+=$'\b' ;; f) out+=$'\f' ;;
            u) hex="${s:0:4}"; s="${s:4}"
               if [[ "$hex" =~ ^[0-9a-fA-F]{4}$ ]]; then printf -v ch "\\u$hex"; out+="$ch"; fi ;;
            *) out+="${BASH_REMATCH[2]}" ;;
        esac
    done
    printf '%s' "$out$s"
}

json_flatten() {
    local s=$1 depth=0 expect_key=0 key="" path i
    local -a kind=() name=()
    while [ -n "$s" ]; do
        case "${s:0:1}" in
            [[:space:]]) s="${s:1}" ;;
            '{') depth=$((depth + 1)); kind[depth]=o; name[depth]=""; expect_key=1; s="${s:1}" ;;
            '[') depth=$((depth + 1)); kind[depth]=a; name[depth]=0; expect_key=0; s="${s:1}" ;;
            '}'|']') depth=$((depth - 1)); expect_key=0; s="${s:1}" ;;
            ':') s="${s:1}" ;;
            ',') if [ "${kind[depth]:-}" = a ]; then name[depth]=$((name[depth] + 1)); else expect_key=1; fi; s="${s:1}" ;;
            '"')
                [[ "$s" =~ $RE_STRING ]] || return 1
                s="${s:${#BASH_REMATCH[0]}}"
                if [ "$expect_key" = 1 ]; then
                    name[depth]="$(json_unescape "${BASH_REMATCH[1]}")"; expect_key=0
                else
                    path=""; for ((i = 1; i <= depth; i++)); do path+="${path:+.}${name[i]}"; done
                    printf '%s\t%s\n' "$path" "$(json_unescape "${BASH_REMATCH[1]}" | tr '\n\t' '  ')"
                fi ;;
            *)
                [[ "$s" =~ $RE_SCALAR ]] || return 1
                s="${s:${#BASH_REMATCH[0]}}"
                path=""; for ((i = 1; i <= depth; i++)); do path+="${path:+.}${name[i]}"; done
                printf '%s\t%s\n' "$path" "${BASH_REMATCH[1]}" ;;
        esac
    done
}

# json_get FLAT PATH: the value at PATH in the output of json_flatten.
json_get() {
    local line
    while IFS= read -r line; do
        if [ "${line%%$'\t'*}" = "$2" ]; then printf '%s' "${line#*$'\t'}"; return 0; fi
    done <<<"$1"
    return 1
}

json_string() {
    local s=$1 out="" c i
    s="${s//\\/\\\\}"; s="${s//\"/\\\"}"
    for ((i = 0; i < ${#s}; i++)); do
        c="${s:i:1}"
        case "$c" in
            $'\n') out+='\n' ;; $'\t') out+='\t' ;; $'\r') out+='\r' ;;
            [[:cntrl:]]) ;;  # other control characters are dropped
            *) out+="$c" ;;
        esac
    done
    printf '"%s"' "$out"
}

# --- HTTP with retries ------------------------------------------------------------------------------------------
# api METHOD PATH [BODY [IDEMPOTENCY_KEY]] sets STATUS and BODY. Retries on no answer, 408, 429 and 5xx.
STATUS="" BODY=""
api_once() {
    local method=$1 path=$2 body=${3:-} key=${4:-} out="$state/out.$BASHPID" headers="$state/headers.$BASHPID"
    local -a args=(-sS -o "$out" -D "$headers" -w '%{http_code}' -X "$method" -H @"$state/auth"
                   -H 'Accept: application/json' -H 'Expect:' --connect-timeout 10 --max-time 120)
    [ -n "$body" ] && args+=(-H 'Content-Type: application/json' --data-binary "$body")
    [ -n "$key" ] && args+=(-H "Idempotency-Key: $key")
    STATUS="$(curl "${args[@]}" "$url$path" 2>"$state/curl.$BASHPID")" || STATUS="000"
    BODY="$(cat "$out" 2>/dev/null)"
    [ "$STATUS" = "000" ] && BODY="$(cat "$state/curl.$BASHPID" 2>/dev/null)"
    rm -f "$out" "$state/curl.$BASHPID"
}

retry_after() {
    local line
    [ -f "$state/headers.$BASHPID" ] || { printf '0'; return; }
    while IFS= read -r line; do
        line="${line%$'\r'}"
        if [[ "${line,,}" =~ ^retry-after:[[:space:]]*([0-9]+) ]]; then printf '%s' "${BASH_REMATCH[1]}"; return; fi
    done <"$state/headers.$BASHPID"
    printf '0'
}

api() {
    local attempt=0 delay=$retry_seconds wait_for
    while :; do
        api_once "$@"
        case "$STATUS" in
            000|408|429|500|502|503|504) ;;
            *) return 0 ;;
        esac
        if [ "$attempt" -ge "$retries" ]; then return 0; fi
        attempt=$((attempt + 1))
        wait_for=$(retry_after); [ "$wait_for" -gt "$delay" ] || wait_for=$delay
        say "$1 $2: ${STATUS/#000/no answer} — retry $attempt of $retries in ${wait_for} s."
        sleep "$wait_for"
        delay=$((delay * 2)); [ "$delay" -le 300 ] || delay=300
    done
}

# problem: the sentence of a problem-details answer, with the field errors of a validation problem.
problem() {
    local flat line text="" path
    flat="$(json_flatten "$BODY" 2>/dev/null)" || { printf '%s' "${BODY:0:300}"; return; }
    text="$(json_get "$flat" detail || json_get "$flat" title || printf '%s' "${BODY:0:300}")"
    while IFS= read -r line; do
        path="${line%%$'\t'*}"
        case "$path" in errors.*) path="${path#errors.}"; text+=" ${path%.*}: ${line#*$'\t'}" ;; esac
    done <<<"$flat"
    printf '%s' "$text"
}

new_key() {
    local r
    if [ -r /proc/sys/kernel/random/uuid ]; then r="$(cat /proc/sys/kernel/random/uuid)"; else r="$RANDOM$RANDOM$RANDOM$$"; fi
    printf 'runfold-job-%s-%s' "$1" "$r"
}

# --- the steps of one run ---------------------------------------------------------------------------------------
heartbeat_loop() {
    local run_id=$1 run_dir=$2 target=$3 sleeper=""
    trap '[ -n "$sleeper" ] && kill "$sleeper" 2>/dev/null; exit 0' TERM
    while :; do
        sleep "$heartbeat_seconds" & sleeper=$!
        wait "$sleeper"
        api_once POST "/api/runs/$run_id/heartbeat"
        case "$STATUS" in
            200) say "Heartbeat: lease extended to $(json_get "$(json_flatten "$BODY")" leaseExpiresAt)." ;;
            409|404|403)
                say "Heartbeat refused ($STATUS): $(problem) Stopping the solver."
                : >"$run_dir/.claim-lost"
                kill -TERM "$target" 2>/dev/null
                exit 0 ;;
            *) say "Heartbeat failed (${STATUS/#000/no answer}); the lease still runs, trying again in ${heartbeat_seconds} s." ;;
        esac
    done
}

# read_results FILE: sets VALUES (a JSON object), NOTE, DECLARED (state the solver wrote, if any) and PROBLEMS.
read_results() {
    local file=$1 line key value first="" sep=""
    VALUES="" NOTE="" DECLARED="" PROBLEMS=""
    [ -s "$file" ] || { PROBLEMS="the solver wrote no results file ($(basename "$file"))"; return; }
    IFS= read -r -d '' first <"$file"
    first="${first#"${first%%[![:space:]]*}"}"
    if [ "${first:0:1}" = "{" ]; then VALUES="$first"; return; fi   # a JSON object of name: number, sent as it is
    while IFS= read -r line || [ -n "$line" ]; do
        line="${line%$'\r'}"
        line="${line#"${line%%[![:space:]]*}"}"
        [ -z "$line" ] || [ "${line:0:1}" = "#" ] && continue
        if [[ ! "$line" =~ ^([^=]+)=(.*)$ ]]; then PROBLEMS+="${PROBLEMS:+; }'$line' is not name = value"; continue; fi
        key="${BASH_REMATCH[1]}"; value="${BASH_REMATCH[2]}"
        key="${key%"${key##*[![:space:]]}"}"
        value="${value#"${value%%[![:space:]]*}"}"; value="${value%"${value##*[![:space:]]}"}"
        case "${key,,}" in
            note) NOTE="$value" ;;
            state) DECLARED="${value,,}" ;;
            *)
                if [[ "$value" =~ ^[+-]?([0-9]+([.][0-9]*)?|[.][0-9]+)([eE][+-]?[0-9]+)?$ ]]; then
                    value="${value#+}"
                    [[ "$value" =~ ^(-?)[.](.*)$ ]] && value="${BASH_REMATCH[1]}0.${BASH_REMATCH[2]}"
                    [[ "$value" =~ ^(-?[0-9]+)[.]([eE].*)?$ ]] && value="${BASH_REMATCH[1]}${BASH_REMATCH[2]}"
                    VALUES+="$sep$(json_string "$key"):$value"; sep=","
                else
                    PROBLEMS+="${PROBLEMS:+; }the value of $key is not a number: '$value'"
                fi ;;
        esac
    done <"$file"
    VALUES="{$VALUES}"
    [ "$VALUES" != "{}" ] || [ "$DECLARED" = "failed" ] || [ -n "$PROBLEMS" ] || PROBLEMS="the results file has no values"
}

# post_result RUN_ID BODY: PUT with one idempotency key for every retry. Sets REVISION; returns the HTTP status class.
post_result() {
    local run_id=$1 body=$2 key
    key="$(new_key "$run_id")"
    api PUT "/api/runs/$run_id/result" "$body" "$key"
    REVISION="$(json_get "$(json_flatten "$BODY" 2>/dev/null)" revision 2>/dev/null || true)"
}

run_one() {
    local flat run_id number run_dir line path value names="" env_name started finished seconds code tail_text body state_word
    local claim_body='{"count":1}'
    [ -n "$lease_hours" ] && claim_body="{\"count\":1,\"leaseHours\":$lease_hours}"
    claiming=1
    api POST "/api/studies/$study/claims" "$claim_body"
    case "$STATUS" in
        200) ;;
        000) die 2 "The server at $url did not answer after $retries retries: $BODY" ;;
        401|403|404) die 2 "The server refused the claim ($STATUS): $(problem)" ;;
        *) die 2 "The claim failed ($STATUS): $(problem)" ;;
    esac
    flat="$(json_flatten "$BODY")" || die 2 "The claim's answer is not JSON: ${BODY:0:200}"
    run_id="$(json_get "$flat" 0.id)" || { claiming=0; say "Study $study has no open run."; [ "$stop_requested" = 0 ] || exit 143; return 10; }
    number="$(json_get "$flat" 0.number)"
    current_run="$run_id"
    claiming=0
    [ "$stop_requested" = 0 ] || on_signal   # stopped while the claim was on its way
    run_dir="$workdir/run-$number"
    mkdir -p "$run_dir"
    rm -f "$run_dir/.claim-lost" "$run_dir/$results_name"
    say "Claimed run $number (id $run_id) of study $study; lease until $(json_get "$flat" 0.leaseExpiresAt || echo '?'). Folder: $run_dir"

    # The run's factor values, twice: JSON for programs, name=value lines for shell scripts.
    : >"$run_dir/factors.env"
    local json="" sep=""
    while IFS= read -r line; do
        path="${line%%$'\t'*}"; value="${line#*$'\t'}"
        case "$path" in 0.factors.*) ;; *) continue ;; esac
        path="${path#0.factors.}"
        printf '%s=%s\n' "$path" "$value" >>"$run_dir/factors.env"
        if [[ "$value" =~ ^-?[0-9][0-9.eE+-]*$ ]]; then json+="$sep$(json_string "$path"):$value"; else json+="$sep$(json_string "$path"):$(json_string "$value")"; fi
        sep=","
        env_name="RUNFOLD_FACTOR_$(printf '%s' "$path" | tr -c 'A-Za-z0-9_' '_' | tr '[:lower:]' '[:upper:]')"
        export "$env_name=$value"; names+=" $env_name"
    done <<<"$flat"
    printf '{%s}\n' "$json" >"$run_dir/factors.json"
    export RUNFOLD_RUN_ID="$run_id" RUNFOLD_RUN_NUMBER="$number" RUNFOLD_STUDY="$study" \
           RUNFOLD_FACTORS_JSON="$run_dir/factors.json" RUNFOLD_FACTORS_ENV="$run_dir/factors.env" \
           RUNFOLD_RESULTS="$run_dir/$results_name"

    started=$(date +%s)
    ( cd "$run_dir" && exec "$@" ) >"$run_dir/solver.log" 2>&1 &
    solver_pid=$!
    heartbeat_loop "$run_id" "$run_dir" "$solver_pid" &
    heartbeat_pid=$!
    wait "$solver_pid"; code=$?
    solver_pid=""
    finished=$(date +%s); seconds=$((finished - started))
    stop_heartbeat
    for env_name in $names; do unset "$env_name"; done

    if [ -e "$run_dir/.claim-lost" ]; then say "Run $number was lost to its lease; nothing is uploaded."; return 3; fi

    read_results "$run_dir/$results_name"
    if [ "$code" -eq 0 ] && [ -z "$PROBLEMS" ] && [ "$DECLARED" != "failed" ]; then
        state_word=done
        body="{\"state\":\"done\",\"values\":$VALUES,\"solverSeconds\":$seconds${NOTE:+,\"note\":$(json_string "$NOTE")}}"
    else
        state_word=failed
        if [ "$code" -ne 0 ]; then
            # Printable ASCII only: a log excerpt must not break the JSON body with stray bytes.
            tail_text="$(tail -n "$log_lines" "$run_dir/solver.log" 2>/dev/null | tr -cd '\11\12\40-\176')"
            NOTE="The solver exited with code $code after ${seconds} s. Last lines of solver.log:"$'\n'"$tail_text"
        elif [ "$DECLARED" = "failed" ]; then
            NOTE="${NOTE:-The solver reported the run as failed.}"
        else
            NOTE="The solver finished, but $PROBLEMS."
        fi
        body="{\"state\":\"failed\",\"values\":{},\"solverSeconds\":$seconds,\"note\":$(json_string "${NOTE:0:3900}")}"
    fi

    post_result "$run_id" "$body"
    case "$STATUS" in
        200|201) ;;
        409) say "Run $number is no longer yours: $(problem)"; return 3 ;;
        400|422)
            if [ "$state_word" = done ]; then
                local reason; reason="$(problem)"
                say "The server refused the results of run $number: $reason — recording the run as failed."
                post_result "$run_id" "{\"state\":\"failed\",\"values\":{},\"solverSeconds\":$seconds,\"note\":$(json_string "The results file was refused: $reason")}"
                [ "$STATUS" = 200 ] || [ "$STATUS" = 201 ] || die 2 "Recording the failure failed too ($STATUS): $(problem)"
                printf 'RUNFOLD_RESULT run=%s state=failed revision=%s\n' "$number" "$REVISION"
                current_run=""
                return 4
            fi
            die 2 "The server refused the failure report of run $number ($STATUS): $(problem)" ;;
        000) die 2 "The result of run $number could not be uploaded: the server did not answer after $retries retries. The run stays claimed until its lease lapses." ;;
        *) die 2 "The result of run $number could not be uploaded ($STATUS): $(problem)" ;;
    esac
    say "Run $number recorded as $state_word, revision $REVISION."
    printf 'RUNFOLD_RESULT run=%s state=%s revision=%s\n' "$number" "$state_word" "$REVISION"
    current_run=""
    return 0
}

# A stopped job (scancel, the queue's time limit) hands its run back instead of leaving it claimed.
claiming=0 stop_requested=0
on_signal() {
    # Until the claim's answer is read the run's id is not known: note the stop and act once it is.
    if [ "$claiming" = 1 ]; then stop_requested=1; return; fi
    trap '' TERM INT
    [ -n "$solver_pid" ] && kill -TERM "$solver_pid" 2>/dev/null
    stop_heartbeat
    if [ -n "$current_run" ]; then
        retries=2 api POST "/api/runs/$current_run/release"
        say "Stopped by a signal; run id $current_run released ($STATUS)."
    fi
    exit 143
}
trap on_signal TERM INT

# --- main -------------------------------------------------------------------------------------------------------
api GET /api/account
case "$STATUS" in
    200) say "Signed in as $(json_get "$(json_flatten "$BODY")" userName) at $url." ;;
    000) die 2 "The server at $url did not answer: $BODY" ;;
    *) die 2 "The server refused the token ($STATUS): $(problem)" ;;
esac

done_count=0
worst=0
while [ "$runs_wanted" -eq 0 ] || [ "$done_count" -lt "$runs_wanted" ]; do
    run_one "$@"; rc=$?
    [ "$rc" -eq 10 ] && break
    [ "$rc" -gt "$worst" ] && worst=$rc
    [ "$rc" -eq 3 ] && break
    done_count=$((done_count + 1))
done
exit "$worst"
