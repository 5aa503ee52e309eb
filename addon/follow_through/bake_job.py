"""One follow-through bake as a job that runs in steps and can be stopped before it writes.

A bake is: check the request, sample the rig (or take the motion kept from the
last bake of the same rig, :mod:`.sampled_motion`), simulate the chains, turn
the result into curves, write them. :class:`BakeJob` does everything but the
writing in :meth:`~BakeJob.step` calls of a given length, so the operator can
move a progress bar and see Esc between them; :meth:`~BakeJob.cancel` puts the
rig back as it was, with nothing written. The simulation, which cannot stop
half-way, may run on a worker thread (pure numpy, no Blender data), so Esc is
still seen while it runs; a cancelled simulation's result is dropped. BLAS is
held to one thread while the simulation runs (:mod:`.blas_threads`).
"""

import threading
import time

# numpy imports numpy.ma lazily inside np.unique (which the chain set-up calls): ≈40 ms, paid here when
# the add-on loads instead of inside the first bake of a session
import numpy.ma  # noqa: F401

from ..rig.fingerprint import motion_fingerprint
from ..rig.sampling import PoseSampling
from . import bake, played_deltas, sampled_motion
from .blas_threads import blas_threads, one_blas_thread

#: BLAS threads reported from inside the last simulation (None: no OpenBLAS found), for the benchmark and tests.
LAST_BLAS_THREADS = [None]
#: :attr:`BakeJob.timings` of the last job that got its curves ready, and whether it reused kept motion.
LAST_TIMINGS: dict = {}


def simulate_on_one_blas_thread(call):
    """Run the core's simulation (a callable) with BLAS on one thread; returns what it returns."""
    with one_blas_thread():
        LAST_BLAS_THREADS[0] = blas_threads()
        return call()


class BakeJob:
    """A follow-through bake of ``request`` on ``rig``, prepared in steps.

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
    request : bake.LagRequest
    threaded : bool
        Simulate on a worker thread (the modal operator); False runs it inside :meth:`step`.

    Attributes
    ----------
    reused : bool
        The motion kept from the last bake was used (nothing sampled).
    timings : dict of str -> float
        Seconds spent sampling (0 when reused), simulating, building the curves and writing them
        (with any read-back of constrained chains).
    result : ChainBake or None
        The core's result, once simulated.
    read_backs : list of float
        After :meth:`write` on a chain with constraints (:mod:`.played_deltas`): the largest angle
        between played and simulated rotations at each read-back [rad]; empty when none was needed.

    Raises
    ------
    bake.LagError, LeapwrightError
        For a request that cannot be baked, before anything is changed.
    """

    def __init__(self, scene, rig, request, threaded=False):
        bake.check(rig, request)
        request.parameters.coefficients()  # bad values are reported before the slow part
        self.scene, self.rig, self.request, self.threaded = scene, rig, request, threaded
        self.names, self.frames, self.eulers, self.channels = bake.sampling_plan(rig, request, scene)
        self.key = sampled_motion.take_key(self.names, self.frames, self.channels, len(request.bones))
        self.work, self.reused, self.cancelled = None, False, False
        self.result, self.read_backs = None, []
        self.timings = {"sampling": 0.0, "simulation": 0.0, "curves": 0.0, "writing": 0.0}
        self._take = self._sampling = self._thread = None
        self._body_text = ""
        self._outcome = []
        self._fingerprint = motion_fingerprint(scene, rig, skip_tracks=(bake.TRACK,))
        self._muted = bake.mute_layer(rig)
        self._frame = (scene.frame_current, scene.frame_subframe)
        try:
            take = sampled_motion.find(scene, rig, self.key, self._fingerprint)
            if take is not None and sampled_motion.confirm(scene, rig, take, self.frames):
                self._take, self.reused = take, True
                self._unmute()
            else:
                self._sampling = PoseSampling(scene, rig, self.frames, self.names, self.channels,
                                              out=sampled_motion.spare_matrices(scene, rig, self.key))
        except BaseException:
            self._unmute()
            raise

    def _unmute(self):
        if self._muted is not None:
            track, was = self._muted
            self._muted = None
            bake.unmute_layer(self.scene, track, was, self._frame)

    @property
    def progress(self):
        """Share of the job done, 0..1 (sampling counts for the first 80 %)."""
        if self.work is not None:
            return 1.0
        if self._sampling is not None:
            return 0.8 * self._sampling.done / max(self._sampling.frames.size, 1)
        return 0.8

    def step(self, seconds=None):
        """Work for about ``seconds`` (to the end when None); True when the curves are ready to write."""
        if self.cancelled:
            raise RuntimeError("this bake was cancelled")
        try:
            return self._step(seconds)
        except BaseException:
            self.cancel()
            raise

    def _step(self, seconds):
        if self.work is not None:
            return True
        if self._sampling is not None and not self._sample(seconds):
            return False
        if not self._outcome:
            if self._thread is None:
                self._started = time.perf_counter()
                call = bake.simulation(self.scene, self.rig, self.request, self._take.matrices, self._take.prepared)
                self._body_text = getattr(call, "body_text", "")
                if not self.threaded:
                    self._outcome.append(simulate_on_one_blas_thread(call))
                else:
                    self._thread = threading.Thread(target=self._simulate_aside, args=(call,), daemon=True)
                    self._thread.start()
            if self._thread is not None:
                self._thread.join(seconds)
                if not self._outcome:
                    return False
            self.timings["simulation"] = time.perf_counter() - self._started
        result = self._outcome[0]
        if isinstance(result, BaseException):
            raise result
        self.result = result
        start = time.perf_counter()
        self.work = bake.curves_for(self.rig, self.request.bones, self.eulers, self.frames, self._take.values, result,
                                    self._body_text)
        self.timings["curves"] = time.perf_counter() - start
        LAST_TIMINGS.clear()
        LAST_TIMINGS.update(self.timings, reused=self.reused)
        return True

    def _sample(self, seconds):
        self.timings["sampling"] += sampled_motion.timed_sampling(self._sampling, seconds)
        if not self._sampling.finished:
            return False
        start = time.perf_counter()
        matrices, _, values = self._sampling.result()
        self.timings["sampling"] += time.perf_counter() - start  # the world matrices put together count too
        self._sampling.close(restore_frame=False)  # the unmute below evaluates the frame once
        self._sampling = None
        self._unmute()
        self._take = sampled_motion.SampledMotion(self.key, self._fingerprint, matrices, values,
                                                  self.timings["sampling"])
        sampled_motion.keep(self.scene, self.rig, self._take)
        return True

    def _simulate_aside(self, call):
        try:
            result = simulate_on_one_blas_thread(call)
        except BaseException as exc:  # handed to the main thread and raised there
            result = exc
        self._outcome.append(result)

    def cancel(self):
        """Stop: nothing is written; the meshes, the frame and the layer are as they were."""
        self.cancelled = True
        if self._sampling is not None:
            self._sampling.close(restore_frame=self._muted is None)
            self._sampling = None
        self._unmute()

    def write(self):
        """Write the prepared curves (after :meth:`step` returned True)."""
        start = time.perf_counter()
        if not bake.apply(self.rig, self.work):  # a new layer may have moved the animator's action to a track
            sampled_motion.restamp(self.scene, self.rig,
                                   motion_fingerprint(self.scene, self.rig, skip_tracks=(bake.TRACK,)))
        passes = played_deltas.correction_passes(self.rig, self.request.bones)
        if passes:
            self.read_backs = played_deltas.play_as_simulated(self.scene, self.rig, self, self._rewrite, passes)
        self.timings["writing"] = time.perf_counter() - start
        LAST_TIMINGS["writing"] = self.timings["writing"]

    @property
    def animated(self):
        """Sampled world matrices' 3x3 parts (F, B, 3, 3) of the chosen bones (the animated motion)."""
        return self._take.matrices[:, :len(self.request.bones), :3, :3]

    def _rewrite(self, result):
        self.work = bake.curves_for(self.rig, self.request.bones, self.eulers, self.frames, self._take.values, result,
                                    self._body_text)
        bake.apply(self.rig, self.work)

    def run(self):
        """Prepare to the end in this thread; returns the work (not yet written)."""
        while not self.step():
            pass
        return self.work
