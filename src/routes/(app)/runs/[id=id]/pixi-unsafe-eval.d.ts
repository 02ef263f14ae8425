// pixi.js ships this side-effect entry without a declaration its `exports` map points to (init.mjs, no init.d.mts)
declare module 'pixi.js/unsafe-eval' {}
