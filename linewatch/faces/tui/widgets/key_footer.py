"""The footer of every view: the keys that matter here, fitted to the width of the terminal.

Textual's Footer lists every shown binding and lets the row run off the right edge. This one
leaves out the key of the view you are already on, then tightens the spacing, then drops the
least needed keys until the row fits; `?` (the keys help, which lists everything) and `q` stay.
"""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.events import Resize
from textual.reactive import reactive
from textual.screen import Screen
from textual.widget import Widget
from textual.widgets import Footer

# Dropped first to last when the row does not fit, after the view you are on.
SPARE_ACTIONS = (
    "unshelve",
    "attention",
    "show('feeds')",
    "show('board')",
    "filter",
    "acknowledge_all",
    "show('alarms')",
    "page_down",
    "screen.move(-1)",
)
KEPT_ACTIONS = ("keys_help", "leave")


def key_width(key_display: str, description: str, compact: bool) -> int:
    """Cells one key takes in the footer (KeyCap's padding, and the compact margin)."""
    return len(key_display) + len(description) + (2 if compact else 3)


def fit_keys(
    keys: list[tuple[Binding, str]], width: int, here: str | None
) -> tuple[list[tuple[Binding, str]], bool]:
    """Which (binding, key shown) pairs to draw in `width` cells, and whether compactly.
    `here` is the action that would lead to the view already shown (left out)."""
    keys = [k for k in keys if k[0].action != here]

    def total(chosen: list[tuple[Binding, str]], compact: bool) -> int:
        return sum(key_width(shown, b.description, compact) for b, shown in chosen)

    if not width or total(keys, False) <= width:
        return keys, False
    if total(keys, True) <= width:
        return keys, True
    order = list(SPARE_ACTIONS) + [
        b.action for b, _ in reversed(keys) if b.action not in KEPT_ACTIONS
    ]
    for action in order:
        if total(keys, True) <= width:
            break
        keys = [k for k in keys if k[0].action != action]
    return keys, True


class KeyCap(Widget):
    """One key in the footer: the key, then what it does, coloured by the theme's footer
    colours through its component classes; a click presses the key."""

    ALLOW_SELECT = False
    COMPONENT_CLASSES: ClassVar[set[str]] = {"key-cap--key", "key-cap--description"}
    DEFAULT_CSS = """
    KeyCap {
        width: auto;
        height: 1;
        text-wrap: nowrap;
        background: $footer-item-background;
        .key-cap--key {
            color: $footer-key-foreground;
            background: $footer-key-background;
            text-style: bold;
            padding: 0 1;
        }
        .key-cap--description {
            padding: 0 1 0 0;
            color: $footer-description-foreground;
            background: $footer-description-background;
        }
        &:hover {
            pointer: pointer;
            color: $footer-key-foreground;
            background: $block-hover-background;
        }
        &.-disabled {
            text-style: dim;
        }
        &.-compact {
            margin-right: 1;
            .key-cap--key {
                padding: 0;
            }
            .key-cap--description {
                padding: 0 0 0 1;
            }
        }
    }
    """

    compact = reactive(True, toggle_class="-compact")

    def __init__(self, key: str, key_display: str, description: str, action: str, *,
                 disabled: bool = False, tooltip: str = "") -> None:
        super().__init__(classes="-disabled" if disabled else "")
        self.key = key
        self.action = action
        self.key_display = key_display
        self.description = description
        self.inactive = disabled
        self.set_reactive(Widget.shrink, False)
        if tooltip:
            self.tooltip = tooltip

    def render(self) -> Text:
        key = self.get_component_styles("key-cap--key").padding
        words = self.get_component_styles("key-cap--description").padding
        text = Text.assemble(
            (" " * key.left + self.key_display + " " * key.right,
             self.get_component_rich_style("key-cap--key")),
            (" " * words.left + self.description + " " * words.right,
             self.get_component_rich_style("key-cap--description")),
        )
        text.stylize_before(self.rich_style)
        return text

    def on_mouse_down(self) -> None:
        if self.inactive:
            self.app.bell()
        else:
            self.app.simulate_key(self.key)


class KeyFooter(Footer):
    """A Footer that always fits on one line of the terminal, and is rebuilt only when the keys
    it shows change: Textual asks on every focus change and every showing of the screen, and a
    rebuild holds back the screen's frames until its keys are mounted again (switching views
    waited for three rebuilds of the same keys)."""

    _fitted_for = -1
    _drawn: tuple[object, ...] | None = None  # the keys on show, as `_keys` gave them
    _update_asked = False
    _keys_known = False  # the screen has told its bindings (the keys are drawn from then on)

    def _keys(self) -> tuple[list[tuple[Binding, str, bool, str]], bool]:
        """(binding, key shown, enabled, tooltip) of each key that fits, and whether compactly."""
        seen: set[str] = set()
        keys: list[tuple[Binding, str]] = []
        state: dict[str, tuple[bool, str]] = {}
        for _node, binding, enabled, tooltip in self.screen.active_bindings.values():
            if binding.show and binding.action not in seen:
                seen.add(binding.action)
                keys.append((binding, self.app.get_key_display(binding)))
                state[binding.action] = (enabled, tooltip)
        width = self.size.width or self.app.size.width
        self._fitted_for = width
        chosen, compact = fit_keys(keys, width, self._here())
        return [(b, shown, *state[b.action]) for b, shown in chosen], compact

    @staticmethod
    def _signature(keys: list[tuple[Binding, str, bool, str]], compact: bool) -> tuple[object, ...]:
        return (compact, *((b.key, shown, b.description, b.action, enabled, tooltip)
                           for b, shown, enabled, tooltip in keys))

    def compose(self) -> ComposeResult:
        if not self._keys_known:
            return
        keys, compact = self._keys()
        self._drawn = self._signature(keys, compact)
        self.compact = compact
        for binding, shown, enabled, tooltip in keys:
            yield KeyCap(binding.key, shown, binding.description, binding.action,
                         disabled=not enabled, tooltip=tooltip).data_bind(compact=Footer.compact)

    def bindings_changed(self, screen: Screen[object]) -> None:
        self._keys_known = True
        if screen.app.app_focus and self.is_attached and screen is self.screen:
            self._ask_update()

    def _ask_update(self) -> None:
        """Look again after the next refresh; requests until then are one look."""
        if not self._update_asked:
            self._update_asked = True
            self.call_after_refresh(self._update_keys)

    async def _update_keys(self) -> None:
        self._update_asked = False
        if self.is_attached and self._signature(*self._keys()) != self._drawn:
            await self.recompose()

    def _here(self) -> str | None:
        """The action that leads to this footer's screen, when the screen is one of the views
        (its mode's own screen). Asked of the screen, not of the mode on show, so a view built
        or left in the background gets the same keys as when it is on show."""
        screen = type(self.screen)
        for mode, base in self.app.MODES.items():
            if base is screen:
                return f"show('{mode}')"
        return None

    def on_resize(self, event: Resize) -> None:
        if event.size.width != self._fitted_for:
            self._ask_update()
