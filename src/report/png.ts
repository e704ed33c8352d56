// PNG output: the SVG page rendered by resvg (a registry package that ships its
// own renderer), with the DejaVu Sans font shipped as a package so the picture
// does not depend on the fonts a machine happens to have.
import { createRequire } from "node:module";
import { dirname, join } from "node:path";

const require = createRequire(import.meta.url);

function fontFiles(): string[] {
  try {
    const dir = join(dirname(require.resolve("dejavu-fonts-ttf/package.json")), "ttf");
    return [join(dir, "DejaVuSans.ttf"), join(dir, "DejaVuSans-Bold.ttf")];
  } catch {
    return [];
  }
}

export function svgToPng(svg: string): Buffer {
  const { Resvg } = require("@resvg/resvg-js") as typeof import("@resvg/resvg-js");
  const r = new Resvg(svg, {
    font: { fontFiles: fontFiles(), loadSystemFonts: false, defaultFontFamily: "DejaVu Sans" },
    fitTo: { mode: "original" },
  });
  return r.render().asPng();
}
