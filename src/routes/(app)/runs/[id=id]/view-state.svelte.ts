/** What the viewer chose to see: layers, σ level, coordinates and the selected object. */
import type { Coords } from '$lib/runs';
import type { PinView } from '$lib/validation/runs';
import { allLayers, type Layer } from '$lib/viewer/view';

export class ViewState {
	layers = $state<Layer[]>([...allLayers]);
	sigma = $state(2);
	coords = $state<Coords>('world');
	selected = $state<string | null>(null);

	constructor(initial: PinView | null, runCoords: Coords) {
		this.coords = initial?.coords ?? runCoords;
		if (initial) {
			this.layers = [...initial.layers];
			this.sigma = initial.sigma;
			this.selected = initial.selected;
		}
	}

	toggle(layer: Layer) {
		this.layers = this.layers.includes(layer)
			? this.layers.filter((l) => l !== layer)
			: [...this.layers, layer];
	}

	snapshot(camera: { zoom: number; cx: number; cy: number }): PinView {
		return {
			...camera,
			coords: this.coords,
			layers: [...this.layers],
			sigma: this.sigma,
			selected: this.selected
		};
	}
}
