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

/** typing fields and selects keep every key; a focused checkbox or button keeps only Space, which operates it */
function screenKey(el: HTMLElement, key: string): boolean {
	if (el.isContentEditable || el.tagName === 'TEXTAREA' || el.tagName === 'SELECT') return false;
	if (el instanceof HTMLInputElement)
		return ['checkbox', 'button', 'submit', 'reset'].includes(el.type) && key !== ' ';
	if (el.tagName === 'BUTTON' || el.tagName === 'A') return key !== ' ';
	return true;
}

export function handleKey(e: KeyboardEvent, { player, view, fit, pin, busy }: Targets) {
	if (busy || e.ctrlKey || e.metaKey || e.altKey) return;
	if (e.target instanceof HTMLElement && !screenKey(e.target, e.key)) return;
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
