"""The PCB-editor action: pick a starter template or a spec, edit its main fields, build it
with the footgen command, put the footprint on the board (or regenerate it in place) and
show the rule-check result with the copper drawing.

``wx`` is imported when the action runs, never at import time, so the plugin registers (and
this module imports) in a headless KiCad too.  The board work is in :mod:`.placement`.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import pcbnew

from . import board_view, cli_runner, placement

PLUGIN_NAME = "footgen: printed IFA antenna"
PLUGIN_CATEGORY = "Antenna"
PLUGIN_DESCRIPTION = (
    "Generate a rule-checked printed inverted-F antenna footprint from a footgen spec, "
    "put it on the board at a ground-edge point or regenerate it in place."
)
TOOLBAR_ICON = "icon.png"
SAFETY_NOTE = (
    "footgen's dimensions and predictions are estimates: they never replace measurement of "
    "the built board in its enclosure. A radio product must meet the local radio regulations "
    "and RF-exposure limits of every market it is sold in."
)
#: Named bands of the spec format (footgen's spec schema, target.band; footgen/bands.py has
#: the edges and the regulations) with the names the dialog shows; the CLI validates.
BAND_NAMES = {
    "ism_2g4": "2.4 GHz ISM (2400-2483.5 MHz)",
    "srd_868": "868 MHz SRD, Europe (863-870 MHz)",
    "ism_915": "915 MHz ISM, Americas (902-928 MHz)",
    "ism_433": "433 MHz ISM, Europe (433.05-434.79 MHz)",
    "wifi_5g_low": "5 GHz Wi-Fi, U-NII-1/2A (5150-5350 MHz)",
    "wifi_5g_mid": "5 GHz Wi-Fi, U-NII-2C (5470-5725 MHz)",
    "wifi_5g_high": "5 GHz Wi-Fi, U-NII-3 (5725-5850 MHz)",
    "wifi_5g": "5 GHz Wi-Fi, whole span (5150-5850 MHz)",
    "wifi_6g": "6 GHz Wi-Fi, U-NII-5 to 8 (5925-7125 MHz)",
    "wifi_6g_eu": "6 GHz Wi-Fi, Europe (5945-6425 MHz)",
}
BANDS = tuple(BAND_NAMES)
CUSTOM_BAND = "custom centre frequency"
ARM_DIRECTIONS = ("right", "left")
STYLES = tuple(cli_runner.STYLE_FORMS)
ROTATIONS_DEG = ("0", "90", "180", "270")
#: Widest copper drawing or S11 plot shown in the result dialog (pixels; two side by side).
PREVIEW_MAX_WIDTH_PX = 560
SOURCE_TEMPLATE = 0
SOURCE_SPEC = 1
#: Text boxes of the dialog, in order: (spec field, label).
FIELD_BOXES = (
    ("name", "Footprint name"),
    ("center_mhz", "Centre frequency (MHz, custom band)"),
    ("eps_r", "Laminate eps_r"),
    ("thickness_mm", "Laminate thickness (mm)"),
    ("loss_tangent", "Loss tangent"),
    ("clearance_width_mm", "Clearance width along the edge (mm)"),
    ("clearance_depth_mm", "Clearance depth (mm)"),
)
PLACEMENT_BOXES = (
    ("x_mm", "Feed point x (mm)"),
    ("y_mm", "Feed point y (mm)"),
    ("reference", "Reference"),
)
#: The "Place at" entry that uses the typed feed point instead of a proposed site.
TYPED_POINT = "the feed point typed below"
#: Shown after a net the board does not have yet (the plugin adds it when placing).
NEW_NET_MARK = " (new net)"
#: Where the spec's laminate values came from, as the dialog says it.
LAMINATE_FROM_STACKUP = "Laminate from the board's Physical Stackup"
LAMINATE_FROM_SPEC = "Laminate from the spec (the board has no stackup with dielectric values)"
#: Edge names for proposed sites, by the KiCad rotation that faces the antenna off that edge.
EDGE_NAMES = {0.0: "top", 90.0: "left", 180.0: "bottom", 270.0: "right"}


def _wx():
    import wx

    return wx


def _parent_frame():
    wx = _wx()
    for window in wx.GetTopLevelWindows():
        if window.GetName() == "PcbFrame":
            return window
    return None


def _message(text: str, caption: str = PLUGIN_NAME, error: bool = False) -> None:
    wx = _wx()
    wx.MessageBox(text, caption, wx.OK | (wx.ICON_ERROR if error else wx.ICON_INFORMATION), _parent_frame())


def project_specs(project: Path) -> list[Path]:
    """Specs already kept in the project's footgen folder (not the build outputs beside them)."""
    out = []
    for path in sorted((project / placement.WORK_DIR_NAME).glob("*.json")):
        try:
            cli_runner.read_spec(path)
        except cli_runner.FootgenFailed:
            continue
        out.append(path)
    return out


def template_spec(template: str, cmd: list[str]) -> dict:
    """The spec a starter template gives (written by ``footgen new`` to a temporary file)."""
    with tempfile.TemporaryDirectory() as tmp:
        path = cli_runner.new_spec(template, Path(tmp) / "spec.json", cmd)
        return cli_runner.read_spec(path)


class SpecDialog:
    """The form: source (template or spec), main spec fields, placement.  ``show()`` returns
    the spec dict to build and the placement choices, or None when cancelled."""

    def __init__(self, parent, board, project: Path, cmd: list[str], templates: list[tuple[str, str]], problem: str = "") -> None:
        wx = _wx()
        self.wx, self.board, self.project, self.cmd = wx, board, project, cmd
        self.templates, self.problem = templates, problem
        self.specs = project_specs(project)
        self.stackup = placement.stackup_laminate(Path(board.GetFileName()).read_text("utf-8")) if board.GetFileName() else None
        self.spec: dict = {}
        self.dialog = wx.Dialog(parent, title=PLUGIN_NAME, style=wx.DEFAULT_DIALOG_STYLE | wx.RESIZE_BORDER)
        outer = wx.BoxSizer(wx.VERTICAL)
        self.source = wx.RadioBox(self.dialog, label="Start from", choices=["a starter template", "an existing spec"], majorDimension=1)
        outer.Add(self.source, 0, wx.EXPAND | wx.ALL, 6)
        grid = wx.FlexGridSizer(0, 2, 4, 8)
        grid.AddGrowableCol(1)
        self.template = wx.Choice(self.dialog, choices=[f"{n}  ({s})" if s else n for n, s in templates])
        self.spec_file = wx.FilePickerCtrl(self.dialog, wildcard="footgen spec (*.json)|*.json", path=str(self.specs[0]) if self.specs else "")
        self.band = wx.Choice(self.dialog, choices=[BAND_NAMES[b] for b in BANDS] + [CUSTOM_BAND])
        self.arm_direction = wx.Choice(self.dialog, choices=list(ARM_DIRECTIONS))
        self.style = wx.Choice(self.dialog, choices=list(STYLES))
        self.rotation = wx.ComboBox(self.dialog, choices=list(ROTATIONS_DEG))
        self.boxes = {key: wx.TextCtrl(self.dialog) for key, _ in FIELD_BOXES + PLACEMENT_BOXES}
        self.net_names = sorted(str(n) for n in board.GetNetsByName().keys() if str(n))
        self.rf_net = wx.Choice(self.dialog, choices=self._net_choices(placement.DEFAULT_RF_NET))
        self.gnd_net = wx.Choice(self.dialog, choices=self._net_choices(placement.DEFAULT_GND_NET))
        self.site = wx.Choice(self.dialog, choices=[TYPED_POINT])
        self.sites: list[dict] = []
        self.board_rules = board_view.board_rules(board)
        self.use_board_rules = wx.CheckBox(self.dialog, label="Use the board's design rules as the fab limits")
        rows = [("Template", self.template), ("Spec file", self.spec_file), ("Band", self.band)]
        rows += [(label, self.boxes[key]) for key, label in FIELD_BOXES]
        rows += [("Arm direction", self.arm_direction), ("Style", self.style), ("Place at", self.site)]
        rows += [(label, self.boxes[key]) for key, label in PLACEMENT_BOXES[:2]] + [("Rotation (deg, CCW)", self.rotation)]
        rows += [(label, self.boxes[key]) for key, label in PLACEMENT_BOXES[2:]]
        rows += [("RF net", self.rf_net), ("GND net", self.gnd_net), ("Fab limits", self.use_board_rules)]
        for label, ctrl in rows:
            grid.Add(wx.StaticText(self.dialog, label=label), 0, wx.ALIGN_CENTER_VERTICAL)
            grid.Add(ctrl, 1, wx.EXPAND)
        outer.Add(grid, 1, wx.EXPAND | wx.ALL, 6)
        self.note = wx.StaticText(self.dialog, label="")
        outer.Add(self.note, 0, wx.EXPAND | wx.ALL, 6)
        outer.Add(self.dialog.CreateButtonSizer(wx.OK | wx.CANCEL), 0, wx.EXPAND | wx.ALL, 6)
        self.dialog.SetSizerAndFit(outer)
        if self.specs:  # GTK's file button shows "(None)" for a path given before it is shown
            self.spec_file.SetPath(str(self.specs[0]))
        self.source.Bind(wx.EVT_RADIOBOX, lambda _e: self._load())
        self.template.Bind(wx.EVT_CHOICE, lambda _e: self._load())
        self.spec_file.Bind(wx.EVT_FILEPICKER_CHANGED, lambda _e: self._load())
        self.source.SetSelection(SOURCE_SPEC if self.specs or not templates else SOURCE_TEMPLATE)
        self.source.EnableItem(SOURCE_TEMPLATE, bool(templates))
        if templates:
            self.template.SetSelection(0)
        self._load()

    def _net_choices(self, default: str) -> list[str]:
        """The board's nets; the role's default net, marked new, when the board lacks it."""
        return self.net_names if default in self.net_names else self.net_names + [default + NEW_NET_MARK]

    @staticmethod
    def _select(choice, text: str) -> None:
        for candidate in (text, text + NEW_NET_MARK):
            index = choice.FindString(candidate)
            if index >= 0:
                choice.SetSelection(index)
                return

    def _propose(self) -> None:
        """Sites along the outline where the spec's clearance area fits (nearest the selection)."""
        self.sites = []
        if self.spec.get("clearance"):
            try:
                gnd = self.gnd_net.GetStringSelection().replace(NEW_NET_MARK, "")
                rf = self.rf_net.GetStringSelection().replace(NEW_NET_MARK, "")
                self.sites = board_view.propose(self.board, self.spec, gnd, rf_net=rf, focus_mm=board_view.focus_of_selection(self.board), cmd=self.cmd)
            except (cli_runner.FootgenFailed, cli_runner.FootgenNotFound) as exc:
                self.site_problem = str(exc)
        self.site.Set([site_label(s) for s in self.sites] + [TYPED_POINT])
        self.site.SetSelection(0)

    # -- filling the form ------------------------------------------------------------------
    def _load(self) -> None:
        use_spec = self.source.GetSelection() == SOURCE_SPEC
        self.template.Enable(not use_spec)
        self.spec_file.Enable(use_spec)
        try:
            if use_spec:
                path = self.spec_file.GetPath()
                self.spec = cli_runner.read_spec(Path(path)) if path else {}
            else:
                index = self.template.GetSelection()
                self.spec = template_spec(self.templates[index][0], self.cmd) if index >= 0 else {}
                if self.stackup:
                    self.spec = cli_runner.apply_fields(self.spec, self.stackup)
        except (cli_runner.FootgenFailed, cli_runner.FootgenNotFound) as exc:
            self.spec = {}
            _message(str(exc), error=True)
        self._fill(cli_runner.spec_fields(self.spec))

    def _fill(self, fields: dict) -> None:
        for key, _ in FIELD_BOXES:
            self.boxes[key].SetValue("" if fields.get(key) is None else f"{fields[key]:g}" if isinstance(fields[key], float) else str(fields[key]))
        band = fields.get("band")
        self.band.SetSelection(BANDS.index(band) if band in BANDS else len(BANDS))
        self.arm_direction.SetSelection(ARM_DIRECTIONS.index(fields.get("arm_direction", "right")))
        self.style.SetSelection(STYLES.index(fields.get("style", "straight")))
        where, existing = placement.default_placement(self.board, str(fields.get("name", "")))
        self.boxes["x_mm"].SetValue(f"{where.position_mm[0]:g}")
        self.boxes["y_mm"].SetValue(f"{where.position_mm[1]:g}")
        self.rotation.SetValue(f"{where.rotation_deg:g}")
        self.boxes["reference"].SetValue(where.reference)
        self._select(self.rf_net, where.pad_nets.get(placement.FEED_PAD, placement.DEFAULT_RF_NET))
        self._select(self.gnd_net, where.pad_nets.get("2", placement.DEFAULT_GND_NET))
        self.site_problem = ""
        if existing:
            self.sites = []
            self.site.Set([TYPED_POINT])
            self.site.SetSelection(0)
        else:
            self._propose()
        notes = [self.problem] if self.problem else []
        if self.site_problem:
            notes.append(f"No sites proposed: {self.site_problem}")
        elif not existing and not self.sites:
            notes.append("No place along the board outline fits the clearance area clear of other copper: type a feed point.")
        if existing:
            notes.append(f"{where.reference} is on the board: it will be regenerated in place (position, rotation, reference and nets kept).")
        else:
            notes.append("New footprint: put the feed point on the ground edge, the antenna on the copper-free side.")
        if self.stackup and self.source.GetSelection() == SOURCE_TEMPLATE:
            notes.append(f"{LAMINATE_FROM_STACKUP}: dielectric {self.stackup['thickness_mm']:g} mm" + (f", eps_r {self.stackup['eps_r']:g}" if "eps_r" in self.stackup else "") + ".")
        elif self.source.GetSelection() == SOURCE_SPEC:
            notes.append("Laminate from the spec file.")
        else:
            notes.append(LAMINATE_FROM_SPEC + ".")
        self.note.SetLabel("\n".join(notes))
        self.dialog.Layout()

    # -- reading the form ------------------------------------------------------------------
    def values(self) -> tuple[dict, placement.Placement, dict, dict | None]:
        """(spec to build, placement for a new instance, {"rf_net", "gnd_net"}, chosen site or
        None); ValueError names a field that does not parse."""
        texts = {key: self.boxes[key].GetValue() for key, _ in FIELD_BOXES}
        band_index = self.band.GetSelection()
        if band_index < len(BANDS):
            texts["band"] = BANDS[band_index]
            texts.pop("center_mhz")
        elif not texts.get("center_mhz", "").strip():
            raise ValueError("center_mhz: give a centre frequency in MHz for a custom band")
        texts["arm_direction"] = ARM_DIRECTIONS[self.arm_direction.GetSelection()]
        texts["style"] = STYLES[self.style.GetSelection()]
        spec = cli_runner.apply_fields(self.spec, cli_runner.fields_from_text(texts))
        try:
            x_mm = float(self.boxes["x_mm"].GetValue().replace(",", "."))
            y_mm = float(self.boxes["y_mm"].GetValue().replace(",", "."))
            rotation = float(self.rotation.GetValue().replace(",", "."))
        except ValueError:
            raise ValueError("feed point x/y and rotation must be numbers (mm, degrees)") from None
        reference = self.boxes["reference"].GetValue().strip() or placement.DEFAULT_REFERENCE
        nets = {k: getattr(self, k).GetStringSelection().replace(NEW_NET_MARK, "") for k in ("rf_net", "gnd_net")}
        if not all(nets.values()):
            raise ValueError("rf_net and gnd_net: pick the nets of the feed and the ground")
        if self.use_board_rules.GetValue():
            spec = placement.fab_from_board(spec, self.board_rules)
        index = self.site.GetSelection()
        site = self.sites[index] if 0 <= index < len(self.sites) else None
        if site is not None:
            spec = placement.apply_site(spec, site)
        return spec, placement.Placement((x_mm, y_mm), rotation, reference), nets, site

    def show(self):
        wx = self.wx
        try:
            while self.dialog.ShowModal() == wx.ID_OK:
                if not self.spec:
                    _message("Choose a template or a spec first.", error=True)
                    continue
                try:
                    return self.values()
                except ValueError as exc:
                    _message(str(exc), error=True)
            return None
        finally:
            self.dialog.Destroy()


class ResultDialog:
    """Rule-check result, what happened on the board, the copper drawing, the safety note."""

    def __init__(self, parent, text: str, pngs) -> None:
        wx = _wx()
        self.dialog = wx.Dialog(parent, title=f"{PLUGIN_NAME}: result", style=wx.DEFAULT_DIALOG_STYLE | wx.RESIZE_BORDER)
        sizer = wx.BoxSizer(wx.VERTICAL)
        sizer.Add(wx.StaticText(self.dialog, label=text), 0, wx.EXPAND | wx.ALL, 8)
        row = wx.BoxSizer(wx.HORIZONTAL)
        for png in [p for p in ([pngs] if isinstance(pngs, Path) else pngs or []) if p is not None and p.exists()]:
            image = wx.Image(str(png))
            if image.IsOk():
                if image.GetWidth() > PREVIEW_MAX_WIDTH_PX:
                    height = int(image.GetHeight() * PREVIEW_MAX_WIDTH_PX / image.GetWidth())
                    image = image.Scale(PREVIEW_MAX_WIDTH_PX, height, wx.IMAGE_QUALITY_HIGH)
                row.Add(wx.StaticBitmap(self.dialog, bitmap=wx.Bitmap(image)), 0, wx.ALIGN_CENTER | wx.ALL, 8)
        sizer.Add(row, 0, wx.ALIGN_CENTER)
        caution = wx.StaticText(self.dialog, label=SAFETY_NOTE)
        caution.Wrap(2 * PREVIEW_MAX_WIDTH_PX)
        sizer.Add(caution, 0, wx.EXPAND | wx.ALL, 8)
        sizer.Add(self.dialog.CreateButtonSizer(wx.OK), 0, wx.EXPAND | wx.ALL, 8)
        self.dialog.SetSizerAndFit(sizer)

    def show(self) -> None:
        try:
            self.dialog.ShowModal()
        finally:
            self.dialog.Destroy()


def site_label(site: dict) -> str:
    """How the form lists a proposed site."""
    edge = EDGE_NAMES.get(site["rotation_deg"], f"edge at {site['rotation_deg']:g} deg")
    return (f"{edge} edge near ({site['corner_mm'][0]:g}, {site['corner_mm'][1]:g}) mm, {site['focus_distance_mm']:.0f} mm away, "
            f"arm {site['arm_direction']}, ground {site['ground_width_mm']:g} x {site['ground_length_mm']:g} mm")


def outcome_text(outcome: placement.Outcome, warnings: list[str] = ()) -> str:
    p = outcome.placement
    lines = [outcome.build.summary()]
    lines += [f"Board rules: {w}" for w in warnings]
    lines.append("")
    verb = "Regenerated in place" if outcome.replaced else "Placed"
    lines.append(f"{verb}: {p.reference} at ({p.position_mm[0]:g}, {p.position_mm[1]:g}) mm, rotation {p.rotation_deg:g} deg, nets " + ", ".join(f"pad {k}: {v}" for k, v in sorted(p.pad_nets.items())))
    lines.append(f"Footprint: {outcome.footprint_file}")
    if outcome.library_added:
        lines.append(f"Added library {placement.PROJECT_LIBRARY} to the project fp-lib-table.")
    lines.append(f"Report: {outcome.build.report_path}")
    lines.append("Refill the zones (B) and run the DRC.")
    return "\n".join(lines)


def _read_or_none(path: Path) -> dict | None:
    try:
        return cli_runner.read_spec(path)
    except cli_runner.FootgenFailed:
        return None


def run_action(board) -> None:
    """Everything the toolbar button does."""
    wx = _wx()
    parent = _parent_frame()
    try:
        project = placement.project_dir_of(board)
        cmd = cli_runner.find_footgen()
    except cli_runner.FootgenNotFound as exc:
        _message(str(exc), "footgen not found", error=True)
        return
    except placement.PlacementError as exc:
        _message(str(exc), error=True)
        return
    try:
        templates, problem = cli_runner.list_templates(cmd), ""
    except cli_runner.FootgenFailed as exc:  # existing specs still work
        templates, problem = [], f"No starter templates: {exc}"
    form = SpecDialog(parent, board, project, cmd, templates, problem)
    chosen = form.show()
    if chosen is None:
        return
    spec, where, nets, site = chosen
    spec_path = project / placement.WORK_DIR_NAME / f"{spec['name']}.json"
    if spec_path.exists() and _read_or_none(spec_path) != spec:
        answer = wx.MessageBox(f"{spec_path} exists with other values. Replace it?", PLUGIN_NAME, wx.YES_NO | wx.NO_DEFAULT | wx.ICON_QUESTION, parent)
        if answer != wx.YES:
            return
    cli_runner.write_spec(spec, spec_path)
    kwargs = dict(placement=where, reference=where.reference, rf_net=nets["rf_net"], gnd_net=nets["gnd_net"], cmd=cmd, project_dir=project, site=site)
    try:
        with wx.BusyCursor():
            try:
                outcome = placement.regenerate(board, spec_path, **kwargs)
            except placement.RuleCheckFailed as failed:
                answer = wx.MessageBox(str(failed) + "\n\nPlace it anyway?", PLUGIN_NAME, wx.YES_NO | wx.NO_DEFAULT | wx.ICON_WARNING, parent)
                if answer != wx.YES:
                    ResultDialog(parent, failed.build.summary(), failed.build.png_path).show()
                    return
                outcome = placement.regenerate(board, spec_path, allow_violations=True, **kwargs)
    except (placement.PlacementError, cli_runner.FootgenFailed, cli_runner.FootgenNotFound) as exc:
        _message(str(exc), error=True)
        return
    if parent is not None:  # the PCB editor is open: redraw it
        pcbnew.Refresh()
    warnings = placement.rules_warnings(board_view.board_rules(board), outcome.build.check.get("fab", {}))
    try:
        with wx.BusyCursor():
            s11 = cli_runner.predict_plot(spec_path, outcome.build.out_dir / f"{spec['name']}.s11.png", cmd)
    except cli_runner.FootgenFailed as exc:
        s11, warnings = None, warnings + [f"no S11 prediction ({exc})"]
    ResultDialog(parent, outcome_text(outcome, warnings), [outcome.build.png_path, s11]).show()


class FootgenAction(pcbnew.ActionPlugin):
    """The toolbar button and Tools > External Plugins entry."""

    def defaults(self) -> None:
        self.name = PLUGIN_NAME
        self.category = PLUGIN_CATEGORY
        self.description = PLUGIN_DESCRIPTION
        self.show_toolbar_button = True
        icon = Path(__file__).with_name(TOOLBAR_ICON)
        if icon.exists():
            self.icon_file_name = str(icon)

    def Run(self) -> None:  # noqa: N802 - KiCad's name
        try:
            import wx  # noqa: F401
        except ImportError:
            print("footgen plugin: wxPython is missing; run it from KiCad's PCB editor", file=sys.stderr)
            return
        board = pcbnew.GetBoard()
        if board is None:
            _message("Open a board first.", error=True)
            return
        run_action(board)
