/** The Run screen's keys (DESIGN.md): Space, ←/→, Shift+←/→, [ ], P, F, 1–4. */
import { allLayers } from '$lib/viewer/view';
import type { RunPlayer } from './player.svelte';
import type { ViewState } from './view-state.svelte';

interface Targets {
	player: RunPlayer;
	view: ViewState;
	fit: () => void;
	pin: () => void;
	/** a dialog is open: leave keys to it */
	busy: boolean;
}

export function handleKey(e: KeyboardEvent, { player, view, fit, pin, busy }: Targets) {
	if (busy || e.ctrlKey || e.metaKey || e.altKey) return;
	const el = e.target as HTMLElement | null;
	if (el && (el.isContentEditable || ['INPUT', 'TEXTAREA', 'SELECT'].includes(el.tagName))) return;
	let handled = true;
	switch (e.key) {
		case ' ':
			player.toggle();
			break;
		case 'ArrowRight':
			if (e.shiftKey) player.stepSecond(1);
			else player.stepFrame(1);
			break;
		case 'ArrowLeft':
			if (e.shiftKey) player.stepSecond(-1);
			else player.stepFrame(-1);
			break;
		case '[':
			player.faster(-1);
			break;
		case ']':
			player.faster(1);
			break;
		case 'p':
		case 'P':
			pin();
			break;
		case 'f':
		case 'F':
			fit();
			break;
		case '1':
		case '2':
		case '3':
		case '4':
			view.toggle(allLayers[Number(e.key) - 1]);
			break;
		default:
			handled = false;
	}
	if (handled) e.preventDefault();
}
