"""``meshpress demo``: the whole job on the bundled, invented sample data."""

from __future__ import annotations

from pathlib import Path

from ..bundled import sample_path

#: How the bundled coupe was made (see scripts/make_samples.py): mm, y up, forward -z.
DEMO_SETTINGS = dict(length_unit="mm", up="+y", forward="-z", front_axle=-250.0, rear_axle=2350.0)
#: The bundled samples (scripts/make_samples.py): files, the settings their frames need, what the report says.
SAMPLES = {
    "coupe": dict(mesh="coupe.stl", scan="coupe_scan.stl", taps="coupe_taps.csv", settings=DEMO_SETTINGS,
                  what="a made-up coupe"),
    # A glTF scene of named parts: m, y up, nose along +z, origin on the ground below the front axle.
    "racer": dict(mesh="racer.glb", scan=None, taps="racer_taps.csv",
                  settings=dict(length_unit="m", up="+y", forward="+z", front_axle=0.0, rear_axle=-2.6),
                  what="a made-up car with wheels, an inverted rear wing on stands and a splitter"),
}
DEMO_SPEED_KMH = 100.0
#: Stated accuracy of the demo's (invented) pressure sensors, Pa: the sample readings carry 2 Pa of noise
#: (scripts/make_samples.py), a rectangular +/- 3.5 Pa has a standard uncertainty of 2.0 Pa (GUM 4.3.7).
DEMO_SENSOR_PA = 3.5


def add_parser(sub):
    p = sub.add_parser("demo", help="run the whole job on the bundled sample body and taps (invented data)",
                       description="Load a bundled sample body (invented demo data), put its taps on it, "
                                   "build the pressure field and print the loads with their bands (as 'meshpress "
                                   "uncertainty'); write the JSON and a report (report.html) to --out.")
    p.add_argument("--sample", choices=sorted(SAMPLES), default="coupe",
                   help="coupe (default): one closed body in mm, forward -z, 57 taps; racer: a glTF scene of named "
                        "parts (body, four wheels, rear wing, wing stands, splitter) in m, y up, forward +z, with "
                        "wing and splitter taps; loads per part")
    p.add_argument("--out", default="meshpress-demo", metavar="DIR", help="output folder (default meshpress-demo)")
    p.add_argument("--scan", action="store_true",
                   help="use the scan-like coupe (open underbody, holes, noise); coupe only")
    p.add_argument("--no-report", action="store_true", help="skip the HTML report and pictures (faster)")
    p.add_argument("--no-bands", action="store_true", help="skip the uncertainty bands (faster)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ..loads.analysis import resolve_q, run_loads_parts
    from ..progress import Progress
    from ..loads.results import write_json
    from ..errors import InputError
    from .loads import bands_measurement, format_loads, views_after_fit, write_loads_report

    sample = SAMPLES[args.sample]
    if args.scan and not sample["scan"]:
        raise InputError(f"--scan: the {args.sample} sample has no scan-like copy; use it with --sample coupe")
    mesh = sample_path(sample["scan"] if args.scan else sample["mesh"])
    taps = sample_path(sample["taps"])
    progress = Progress(enabled=False if args.quiet else None)
    q = resolve_q(speed=DEMO_SPEED_KMH / 3.6)
    print(f"meshpress demo: {mesh.name} with {taps.name} at {DEMO_SPEED_KMH:g} km/h (INVENTED DEMO DATA)\n")
    from ..outputs.report import missing_libraries

    missing = [] if args.no_report else missing_libraries()
    views = views_after_fit(not (args.no_report or missing))
    run = run_loads_parts(mesh, taps, q=q, progress=progress, after_fit=views,
                          bands=None if args.no_bands else bands_measurement(DEMO_SENSOR_PA), **sample["settings"])
    print(format_loads(run))
    if run.bands is not None:
        print(f"  (demo: sensors stated at +/- {DEMO_SENSOR_PA:g} Pa; the same with your own data: meshpress loads "
              "--help)")
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    bands = {"uncertainty": run.bands.to_dict()} if run.bands is not None else {}
    if args.no_report or missing:  # with a report, the report writes loads.json (json_extra)
        write_json({**run.result.to_dict(), **bands}, out / "loads.json", protect=(mesh, taps))
        print(f"\n  wrote {out / 'loads.json'}")
        if missing:
            print(f"  no report: it needs {', '.join(missing)} (pip install {' '.join(missing)})")
        return 0
    files = write_loads_report(run, out, protect=(mesh, taps), progress=progress, views_job=views.job,
                               title=f"meshpress demo: {mesh.name}",
                               demo_note=f"INVENTED DEMO DATA ({sample['what']}; made-up readings), to show "
                                         "what meshpress does. Not a measurement of any car.")
    print(f"\n  wrote {files.json}")
    print(f"  wrote {files.html} (open it in a browser) and the files beside it")
    return 0
