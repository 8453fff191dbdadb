// Worker entry of the bench: exposes bench-api over comlink, nothing else. Turbopack serves this
// file's source publicly, so it holds no secrets; the file endpoint authenticates by cookie.
// drawingRenders draws each render into the viewport's canvas once the bench has transferred it.
import { expose, transfer } from "comlink";
import { cancellable, createBenchApi, transferringRenders } from "./bench-api";
import { drawingRenders } from "./bench-surface";

expose(transferringRenders(drawingRenders(cancellable(createBenchApi())), transfer));
