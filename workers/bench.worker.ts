// Worker entry of the bench: exposes bench-api over comlink, nothing else. Turbopack serves this
// file's source publicly, so it holds no secrets; the file endpoint authenticates by cookie.
import { expose, transfer } from "comlink";
import { cancellable, createBenchApi, transferringRenders } from "./bench-api";

expose(transferringRenders(cancellable(createBenchApi()), transfer));
