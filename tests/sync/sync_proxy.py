"""A TCP proxy for the sync tests and benchmark: forwards one connection
from a device to the station, and can cut it, stall it, alter a byte or
record what the device sent."""
import socket
import threading


class Proxy:
    """Forwards one connection to the station; after `cut` bytes in total
    (both directions) it closes both sides; `stall_at` stops forwarding for
    good at that byte, in both directions, closes included, as a radio link
    that drops out would (the peers time out); `flip_at` alters one byte of the
    device's stream; `record` keeps what the device sent."""

    def __init__(self, target_port, cut=None, stall_at=None, flip_at=None, record=None):
        self.target_port, self.cut, self.stall_at, self.flip_at, self.record = target_port, cut, stall_at, flip_at, record
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(4)
        self.port = self.sock.getsockname()[1]
        self.moved = 0
        self.lock = threading.Lock()
        self.thread = threading.Thread(target=self.serve, daemon=True)
        self.thread.start()

    def serve(self):
        try:
            dev, _ = self.sock.accept()
        except OSError:
            return
        st = socket.create_connection(("127.0.0.1", self.target_port))
        done = threading.Event()
        stalled = threading.Event()

        def hold():
            # a stalled link forwards nothing more, not even a close
            done.wait(60)

        def pump(a, b, from_device):
            sent_by_device = 0
            try:
                while not done.is_set():
                    data = a.recv(4096)
                    if stalled.is_set():
                        hold()
                        break
                    if not data:
                        break
                    with self.lock:
                        start = self.moved
                        self.moved += len(data)
                    if from_device and self.record is not None:
                        self.record.append(data)
                    if from_device and self.flip_at is not None and sent_by_device <= self.flip_at < sent_by_device + len(data):
                        k = self.flip_at - sent_by_device
                        data = data[:k] + bytes([data[k] ^ 0x40]) + data[k + 1:]
                    if from_device:
                        sent_by_device += len(data)
                    if self.stall_at is not None and start + len(data) > self.stall_at:
                        b.sendall(data[:max(0, self.stall_at - start)])
                        stalled.set()
                        hold()
                        break
                    if self.cut is not None and start + len(data) > self.cut:
                        b.sendall(data[:max(0, self.cut - start)])
                        break
                    b.sendall(data)
            except OSError:
                pass
            done.set()
            for s in (a, b):
                try:
                    s.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass

        t1 = threading.Thread(target=pump, args=(dev, st, True), daemon=True)
        t2 = threading.Thread(target=pump, args=(st, dev, False), daemon=True)
        t1.start()
        t2.start()
        t1.join()
        t2.join()
        dev.close()
        st.close()
        self.sock.close()
