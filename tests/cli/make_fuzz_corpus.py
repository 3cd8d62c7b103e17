"""Write tests/cli/fuzz_corpus.json: bad input for every command, each expecting exit 2 and one line.

Run ``python -m tests.cli.make_fuzz_corpus`` to regenerate after adding a
command or an option.  A case is ``{"name", "args", "files", "expect"}``:
``args`` may hold ``{tmp}`` (the case's own folder); ``files`` maps a file
name to its text, or to ``{"fifo": true}``, ``{"dir": true}``,
``{"symlink": target}``, ``{"bytes_hex": …}``, ``{"repeat": text, "times": n}``,
``{"deep_json": n}`` (an object nested n deep) or ``{"rows": n, "first_year": y}``
(a record of n years);
``expect`` is 2 (bad input: one line on stderr, nothing on stdout, no
traceback) or 0 (valid: the output must then be valid, strict JSON when
``--json`` is given).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

OUT = Path(__file__).resolve().parent / "fuzz_corpus.json"

PARAMS = ["--loss-rate", "0.5", "--recycling-max", "1800", "--recycling-half", "2500", "--recycling-exponent", "4"]
BAD_NUMBERS = ["nan", "inf", "-inf", "0", "-1", "1_000", "\u0661\u0662", "abc", "", "1e400", "0x10", "1,5", "1e", "--"]
LAKE = {"name": "Pond (fictional)", "area_km2": 1.0, "volume_m3": 1.0e6, "load_kg_yr": 300.0}
LAKE_PARAMS = {"loss_rate": 0.5, "recycling_max": 1800.0, "recycling_half": 2500.0, "recycling_exponent": 4.0}
SCENARIO = {"name": "hold", "years": 5, "load": {"kind": "constant", "kg_per_yr": 300.0}}
PLAN_LAKE = {**LAKE_PARAMS, "volume_m3": 2.79e7, "initial_tp_ug_l": 30.0}
RECORD_HEAD = "year,load_kg,tp_ug_l\n"


def record(rows: list[str]) -> str:
    return RECORD_HEAD + "\n".join(rows) + "\n"


GOOD_RECORD = record([f"{1990 + i},{300 + 10 * i},{25 + i}" for i in range(15)])


def case(name: str, args: list[str], files: dict[str, Any] | None = None, expect: int = 2) -> dict[str, Any]:
    return {"name": name, "args": args, "files": files or {}, "expect": expect}


def special_inputs(cmd: list[str], tail: list[str], what: str) -> list[dict[str, Any]]:
    """A file argument that is not a regular file, or not there, or too big."""
    return [
        case(f"{what}: a FIFO", [*cmd, "{tmp}/pipe", *tail], {"pipe": {"fifo": True}}),
        case(f"{what}: /dev/zero", [*cmd, "/dev/zero", *tail]),
        case(f"{what}: a folder", [*cmd, "{tmp}/folder", *tail], {"folder": {"dir": True}}),
        case(f"{what}: missing", [*cmd, "{tmp}/absent.txt", *tail]),
        case(f"{what}: empty", [*cmd, "{tmp}/empty.txt", *tail], {"empty.txt": ""}),
        case(f"{what}: binary", [*cmd, "{tmp}/bin.dat", *tail], {"bin.dat": {"bytes_hex": "00ff10ab" * 64}}),
        case(f"{what}: 25 MB", [*cmd, "{tmp}/big.txt", *tail], {"big.txt": {"repeat": "a" * 1000, "times": 25_000}}),
    ]


def analyze_cases() -> list[dict[str, Any]]:
    out = []
    for i in range(0, len(PARAMS), 2):
        for bad in BAD_NUMBERS:
            args = list(PARAMS)
            args[i + 1] = bad
            out.append(case(f"analyze {PARAMS[i]} {bad!r}", ["analyze", *args, "--json"]))
    out += [
        case("analyze --load 1e308", ["analyze", *PARAMS, "--load", "1e308", "--json"]),
        case("analyze --load nan", ["analyze", *PARAMS, "--load", "nan", "--json"]),
        case("analyze --load -1e6 (valid)", ["analyze", *PARAMS, "--load", "-1e6", "--json"], expect=0),
        case("analyze --load-range reversed", ["analyze", *PARAMS, "--load-range", "5", "1", "--json"]),
        case("analyze --load-range -1e300 1", ["analyze", *PARAMS, "--load-range", "-1e300", "1", "--json"]),
        case("analyze q = 1e20", ["analyze", *PARAMS[:6], "--recycling-exponent", "1e20", "--json"]),
        case(
            "analyze r = 1e300",
            [
                "analyze",
                "--loss-rate",
                "0.5",
                "--recycling-max",
                "1e300",
                "--recycling-half",
                "2500",
                "--recycling-exponent",
                "4",
                "--json",
            ],
        ),
        case(
            "analyze b = s m / r too small",
            [
                "analyze",
                "--loss-rate",
                "1e-8",
                "--recycling-max",
                "1e8",
                "--recycling-half",
                "1e-3",
                "--recycling-exponent",
                "4",
                "--json",
            ],
        ),
        case("analyze --points 3", ["analyze", *PARAMS, "--points", "3", "--json"]),
        case("analyze with no parameters", ["analyze", "--json"]),
        case("analyze an unknown option", ["analyze", *PARAMS, "--colour", "red"]),
        case("analyze --demo (valid)", ["analyze", "--demo", "--json"], expect=0),
    ]
    lake_files: list[tuple[str, Any]] = [
        (
            "a 400-digit integer",
            json.dumps({**LAKE, "load_kg_yr": 0}).replace('"load_kg_yr": 0', '"load_kg_yr": ' + "9" * 400),
        ),
        ("area true", json.dumps({**LAKE, "area_km2": True})),
        ("a number as the name", json.dumps({**LAKE, "name": 12})),
        ("a name with a newline", json.dumps({**LAKE, "name": "Pond\nLake"})),
        ("an unknown key under parameters", json.dumps({**LAKE, "parameters": {**LAKE_PARAMS, "colour": 1}})),
        ("a missing parameter", json.dumps({**LAKE, "parameters": {"loss_rate": 0.5}})),
        ("nested 5000 deep", {"deep_json": 5000}),
        ("NaN volume", json.dumps({**LAKE, "volume_m3": float("nan")})),
        ("a list", "[1, 2, 3]"),
        ("null", "null"),
        ("not JSON", "name = Pond"),
        ("volume and depth", json.dumps({**LAKE, "mean_depth_m": 3.0})),
        ("no volume", json.dumps({k: v for k, v in LAKE.items() if k != "volume_m3"})),
        ("negative load", json.dumps({**LAKE, "load_kg_yr": -5})),
        ("q beyond the engine", json.dumps({**LAKE, "parameters": {**LAKE_PARAMS, "recycling_exponent": 1e20}})),
        ("parameters as text", json.dumps({**LAKE, "parameters": "fast"})),
    ]
    for what, text in lake_files:
        out.append(
            case(f"analyze --lake: {what}", ["analyze", "--lake", "{tmp}/lake.json", "--json"], {"lake.json": text})
        )
    out.append(
        case(
            "analyze --lake: a byte-order mark (valid)",
            ["analyze", "--lake", "{tmp}/lake.json", *PARAMS, "--json"],
            {"lake.json": "\ufeff" + json.dumps(LAKE)},
            expect=0,
        )
    )
    out += [
        case(
            "analyze --lake: TOML with nan",
            ["analyze", "--lake", "{tmp}/lake.toml", "--json"],
            {"lake.toml": 'name = "Pond"\narea_km2 = nan\nvolume_m3 = 1e6\nload_kg_yr = 1\n'},
        ),
        case(
            "analyze --lake: bad TOML", ["analyze", "--lake", "{tmp}/lake.toml", "--json"], {"lake.toml": "name = \n"}
        ),
        case(
            "analyze --lake: TOML nested deep",
            ["analyze", "--lake", "{tmp}/lake.toml", "--json"],
            {"lake.toml": "x = " + "[" * 3000 + "]" * 3000 + "\n"},
        ),
        case(
            "analyze --lake: not UTF-8",
            ["analyze", "--lake", "{tmp}/lake.json", "--json"],
            {"lake.json": {"bytes_hex": "7b226e616d65223a22ff227d"}},
        ),
    ]
    out += special_inputs(["analyze", "--lake"], ["--json"], "analyze --lake")
    return out


def plan(**changes: Any) -> str:
    return json.dumps({"lake": PLAN_LAKE, "scenarios": [SCENARIO], **changes})


def compare_cases() -> list[dict[str, Any]]:
    plans: list[tuple[str, Any]] = [
        ("a 400-digit integer", plan().replace('"years": 5', '"years": ' + "9" * 400)),
        ("kind is a list", plan().replace('"kind": "constant"', '"kind": []')),
        ("kind is an object", plan().replace('"kind": "constant"', '"kind": {}')),
        ("nested 5000 deep", {"deep_json": 5000}),
        ("a name with NUL", plan(scenarios=[{**SCENARIO, "name": "a\u0000b"}])),
        ("a name with a newline", plan(scenarios=[{**SCENARIO, "name": "a\nb"}])),
        ("a name that is a number", plan(scenarios=[{**SCENARIO, "name": 7}])),
        ("an unknown key", plan(colour="red")),
        ("an unknown scenario key", plan(scenarios=[{**SCENARIO, "speed": 3}])),
        (
            "percent 120",
            plan(
                scenarios=[
                    {**SCENARIO, "load": {"kind": "linear_cut", "from_kg_per_yr": 300, "percent": 120, "over_years": 5}}
                ]
            ),
        ),
        ("members 1e9", plan(scenarios=[{**SCENARIO, "members": 1e9}])),
        ("years 0", plan(scenarios=[{**SCENARIO, "years": 0}])),
        ("years true", plan(scenarios=[{**SCENARIO, "years": True}])),
        ("a NaN load", plan(scenarios=[{**SCENARIO, "load": {"kind": "constant", "kg_per_yr": float("nan")}}])),
        ("an Infinity load", plan(scenarios=[{**SCENARIO, "load": {"kind": "constant", "kg_per_yr": float("inf")}}])),
        ("no scenarios", json.dumps({"lake": PLAN_LAKE, "scenarios": []})),
        ("a list", "[]"),
        ("null", "null"),
        ("not JSON", "lake: x"),
        ("duplicate names", plan(scenarios=[SCENARIO, SCENARIO])),
        ("a treatment of an unknown kind", plan(scenarios=[{**SCENARIO, "treatments": [{"kind": "magic"}]}])),
        (
            "a removal after the horizon",
            plan(scenarios=[{**SCENARIO, "treatments": [{"kind": "removal", "year": 9, "kg": 10}]}]),
        ),
        ("loss rate 2", json.dumps({"lake": {**PLAN_LAKE, "loss_rate": 2.0}, "scenarios": [SCENARIO]})),
        (
            "a lake missing its volume",
            json.dumps({"lake": {k: v for k, v in PLAN_LAKE.items() if k != "volume_m3"}, "scenarios": [SCENARIO]}),
        ),
        ("a table of the wrong length", plan(scenarios=[{**SCENARIO, "load": {"kind": "table", "kg_per_yr": [1, 2]}}])),
        ("a seed that is negative", plan(scenarios=[{**SCENARIO, "seed": -1}])),
    ]
    out = []
    for what, text in plans:
        out.append(case(f"compare: {what}", ["compare", "{tmp}/plan.json", "--json"], {"plan.json": text}))
    out.append(
        case(
            "compare: a byte-order mark (valid)",
            ["compare", "{tmp}/plan.json", "--json"],
            {"plan.json": "\ufeff" + plan()},
            expect=0,
        )
    )
    out += special_inputs(["compare"], ["--json"], "compare")
    good = {"plan.json": plan()}
    out += [
        case(
            "report -o: a symbolic link",
            ["report", "{tmp}/plan.json", "-o", "{tmp}/link.html"],
            {**good, "target.html": "keep me", "link.html": {"symlink": "target.html"}},
        ),
        case("report -o: a folder", ["report", "{tmp}/plan.json", "-o", "{tmp}/out"], {**good, "out": {"dir": True}}),
        case("report -o: a FIFO", ["report", "{tmp}/plan.json", "-o", "{tmp}/pipe"], {**good, "pipe": {"fifo": True}}),
        case("report -o: a device", ["report", "{tmp}/plan.json", "-o", "/dev/null"], good),
        case("report -o: under /proc", ["report", "{tmp}/plan.json", "-o", "/proc/turnback-report.html"], good),
        case("report -o: a missing folder", ["report", "{tmp}/plan.json", "-o", "{tmp}/no/such/report.html"], good),
        case("report -o: under a file", ["report", "{tmp}/plan.json", "-o", "{tmp}/plan.json/report.html"], good),
        case("report -o: the plan itself", ["report", "{tmp}/plan.json", "-o", "{tmp}/plan.json"], good),
        case("report: a bad plan", ["report", "{tmp}/plan.json", "-o", "{tmp}/r.html"], {"plan.json": "[]"}),
    ]
    out += special_inputs(["report"], ["-o", "{tmp}/r.html"], "report")
    return out


def record_cases() -> list[dict[str, Any]]:
    records: list[tuple[str, Any]] = [
        ("Arabic-Indic digits", GOOD_RECORD.replace("1990,300,25", "\u0661\u0669\u0669\u0660,300,25")),
        ("digit separators", GOOD_RECORD.replace("1991,310,26", "1991,3_10,26")),
        ("a load of 1e300", GOOD_RECORD.replace("1992,320,27", "1992,1e300,27")),
        ("TP of inf", GOOD_RECORD.replace("1993,330,28", "1993,330,inf")),
        ("TP of nan", GOOD_RECORD.replace("1993,330,28", "1993,330,nan")),
        ("a decimal comma", GOOD_RECORD.replace("1994,340,29", '1994,340,"29,5"')),
        ("a repeated year", GOOD_RECORD.replace("1995,", "1994,")),
        ("a missing year", GOOD_RECORD.replace("1996,360,31\n", "")),
        ("no header", GOOD_RECORD.replace(RECORD_HEAD, "")),
        ("only 5 years", record([f"{1990 + i},300,25" for i in range(5)])),
        ("a year of 20000", GOOD_RECORD.replace("1997,", "20000,")),
        ("negative load", GOOD_RECORD.replace("1998,380", "1998,-380")),
        ("text in TP", GOOD_RECORD.replace("1999,390,34", "1999,390,high")),
        ("a censored value", GOOD_RECORD.replace("2000,400,35", "2000,400,<5")),
        ("TP in mg/L", record([f"{1990 + i},300,0.0{2 + i % 7}" for i in range(15)])),
        ("6000 rows", {"rows": 6000, "first_year": 1000}),
        ("only commas", ",,,\n,,,\n"),
        ("a semicolon file", GOOD_RECORD.replace(",", ";")),
    ]
    out = []
    for what, text in records:
        out.append(case(f"fit: {what}", ["fit", "{tmp}/rec.csv", "--volume-m3", "1e6", "--json"], {"rec.csv": text}))
        out.append(case(f"warnings: {what}", ["warnings", "{tmp}/rec.csv", "--no-fit", "--json"], {"rec.csv": text}))
    out += special_inputs(["fit"], ["--volume-m3", "1e6", "--json"], "fit")
    out += special_inputs(["warnings"], ["--no-fit", "--json"], "warnings")
    for bad in ["nan", "0", "-5", "1_000", "abc", "1e400"]:
        out.append(
            case(
                f"fit --volume-m3 {bad!r}",
                ["fit", "{tmp}/rec.csv", "--volume-m3", bad, "--json"],
                {"rec.csv": GOOD_RECORD},
            )
        )
    for bad in ["0", "-1", "10", "1e9", "abc"]:
        out.append(
            case(
                f"fit --replicates {bad!r}",
                ["fit", "{tmp}/rec.csv", "--volume-m3", "1e6", "--replicates", bad, "--json"],
                {"rec.csv": GOOD_RECORD},
            )
        )
    out.append(
        case(
            "fit --seed -1",
            ["fit", "{tmp}/rec.csv", "--volume-m3", "1e6", "--seed", "-1", "--json"],
            {"rec.csv": GOOD_RECORD},
        )
    )
    return out


def other_cases() -> list[dict[str, Any]]:
    out = []
    for bad in ["nan", "inf", "0", "-3", "1_000", "abc", "1e7"]:
        out.append(case(f"clarity --tp-ug-l {bad!r}", ["clarity", "--tp-ug-l", bad, "--json"]))
    out.append(case("clarity (valid)", ["clarity", "--tp-ug-l", "40", "--json"], expect=0))
    out += [
        case("serve --host 256.1.1.1", ["serve", "--host", "256.1.1.1", "--port", "1"]),
        case("serve --port 70000", ["serve", "--port", "70000"]),
        case("serve --data-dir a file", ["serve", "--data-dir", "{tmp}/f.txt", "--port", "1"], {"f.txt": "x"}),
        case("serve --workers 100", ["serve", "--workers", "100", "--port", "1"]),
        case("serve --redis-url http", ["serve", "--redis-url", "http://x", "--port", "1"]),
        case("worker --redis-url nothing", ["worker", "--redis-url", "nothing"]),
        case("worker --concurrency 0", ["worker", "--redis-url", "redis://127.0.0.1:1/0", "--concurrency", "0"]),
        case("an unknown command", ["teleport"]),
        case("handout without a lake", ["handout", "-o", "{tmp}/h.html"]),
        case("handout with two lakes", ["handout", "--demo", "--lake", "{tmp}/l.json", "-o", "{tmp}/h.html"]),
        case(
            "handout -o a link",
            ["handout", "--demo", "-o", "{tmp}/link.html"],
            {"t.html": "keep", "link.html": {"symlink": "t.html"}},
        ),
        case("handout -o a folder", ["handout", "--demo", "-o", "{tmp}/d"], {"d": {"dir": True}}),
        case(
            "handout --lake without parameters",
            ["handout", "--lake", "{tmp}/l.json", "-o", "{tmp}/h.html"],
            {"l.json": json.dumps(LAKE)},
        ),
        case("handout --record /dev/zero", ["handout", "--demo", "--record", "/dev/zero", "-o", "{tmp}/h.html"]),
        case(
            "handout --record a FIFO",
            ["handout", "--demo", "--record", "{tmp}/p", "-o", "{tmp}/h.html"],
            {"p": {"fifo": True}},
        ),
        case("handout --units imperial", ["handout", "--demo", "--units", "imperial", "-o", "{tmp}/h.html"]),
        case("handout --pdf a device", ["handout", "--demo", "-o", "{tmp}/h.html", "--pdf", "/dev/null"]),
    ]
    lakes_head = (
        "lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
    )
    screen_files: list[tuple[str, str]] = [
        ("no lake_id column", lakes_head.replace("lake_id,", "") + "Pond,1e6,1,300,0.5,1800,2500,4\n"),
        ("only a header", lakes_head),
        ("every lake bad", lakes_head + "A,Pond,-1,1,300,0.5,1800,2500,4\n"),
        ("not a CSV", "{}\n"),
    ]
    for what, text in screen_files:
        out.append(case(f"screen: {what}", ["screen", "{tmp}/lakes.csv", "--json"], {"lakes.csv": text}))
    out += special_inputs(["screen"], ["--json"], "screen")
    out.append(
        case(
            "screen --replicates 0",
            ["screen", "{tmp}/lakes.csv", "--replicates", "0", "--json"],
            {"lakes.csv": lakes_head + "A,Pond,1e6,1,300,0.5,1800,2500,4\n"},
        )
    )
    return out


def build() -> list[dict[str, Any]]:
    return analyze_cases() + compare_cases() + record_cases() + other_cases()


def main() -> None:
    cases = build()
    OUT.write_text(json.dumps({"cases": cases}, ensure_ascii=True) + "\n")
    print(f"wrote {len(cases)} cases to {OUT.name}")


if __name__ == "__main__":
    main()
