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
    """Cells one key takes in the footer (FooterKey's padding, and the compact margin)."""
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

    def __init__(self, key: str, key_display: str, description: str, *, disabled: bool = False,
                 tooltip: str = "") -> None:
        super().__init__(classes="-disabled" if disabled else "")
        self.key = key
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
    """A Footer that always fits on one line of the terminal."""

    _fitted_for = -1

    def compose(self) -> ComposeResult:
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
        self.compact = compact
        for binding, shown in chosen:
            enabled, tooltip = state[binding.action]
            yield KeyCap(binding.key, shown, binding.description, disabled=not enabled,
                         tooltip=tooltip).data_bind(compact=Footer.compact)

    def _here(self) -> str | None:
        """The action of the view on screen, when it is a view's own first screen."""
        app = self.app
        stack = app.screen_stack
        if stack and self.screen is stack[0]:
            return f"show('{app.current_mode}')"
        return None

    def on_resize(self, event: Resize) -> None:
        if event.size.width != self._fitted_for:
            self.call_after_refresh(self.recompose)
