//go:build unix

package countsql

import (
	"bytes"
	"context"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// requireEngines is set where the engines must run (.ci/run sets it): a
// server that cannot start fails the test instead of skipping it.
func requireEngines() bool { return os.Getenv("LEADLINE_REQUIRE_ENGINES") == "1" }

// unavailable skips the test, naming the install command, or fails it
// when the engines are required.
func unavailable(t *testing.T, install, format string, args ...any) {
	t.Helper()
	msg := fmt.Sprintf(format, args...)
	if requireEngines() {
		t.Fatalf("%s (LEADLINE_REQUIRE_ENGINES=1)", msg)
	}
	t.Skipf("%s; install with: %s (set LEADLINE_REQUIRE_ENGINES=1 to make this a failure)", msg, install)
}

// freePort returns a loopback TCP port nobody listens on now.
func freePort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

// findBin looks a program up on PATH, then in the given folders (glob
// patterns).
func findBin(name string, dirs ...string) string {
	if p, err := exec.LookPath(name); err == nil {
		return p
	}
	for _, d := range dirs {
		m, _ := filepath.Glob(filepath.Join(d, name))
		if len(m) > 0 {
			return m[len(m)-1]
		}
	}
	return ""
}

// run runs a command, failing the test with its output on error.
func run(t *testing.T, cred *syscall.Credential, stdin []byte, name string, args ...string) []byte {
	t.Helper()
	out, err := runErr(cred, stdin, name, args...)
	if err != nil {
		t.Fatalf("%s %s: %v\n%s", filepath.Base(name), strings.Join(args, " "), err, out)
	}
	return out
}

func runErr(cred *syscall.Credential, stdin []byte, name string, args ...string) ([]byte, error) {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, name, args...)
	if cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: cred}
	}
	if stdin != nil {
		cmd.Stdin = bytes.NewReader(stdin)
	}
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	return out.Bytes(), err
}

// pgServer is a PostgreSQL server in a temporary folder on a loopback port.
type pgServer struct {
	psql string
	port int
}

// startPostgres starts a throwaway PostgreSQL server; it is stopped and
// its folder removed when the test ends. PostgreSQL refuses to run as
// root, so as root the server runs as the user nobody.
func startPostgres(t *testing.T) *pgServer {
	t.Helper()
	const install = "apt-get install -y postgresql"
	dirs := []string{"/usr/lib/postgresql/*/bin"}
	initdb, pgctl, psql := findBin("initdb", dirs...), findBin("pg_ctl", dirs...), findBin("psql", dirs...)
	if initdb == "" || pgctl == "" || psql == "" {
		unavailable(t, install, "PostgreSQL is not installed (initdb, pg_ctl and psql not found on PATH or in /usr/lib/postgresql/*/bin)")
	}
	dir, err := os.MkdirTemp("", "leadline-pg-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	var cred *syscall.Credential
	if os.Geteuid() == 0 {
		u, err := user.Lookup("nobody")
		if err != nil {
			unavailable(t, install, "running as root, and no user nobody to run PostgreSQL as: %v", err)
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		cred = &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}
		if err := os.Chmod(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.Chown(dir, uid, gid); err != nil {
			t.Fatal(err)
		}
	}
	data := filepath.Join(dir, "data")
	started := time.Now()
	if out, err := runErr(cred, nil, initdb, "-D", data, "-U", "leadline", "--auth=trust", "-E", "UTF8", "--no-sync"); err != nil {
		unavailable(t, install, "initdb failed: %v\n%s", err, out)
	}
	port := freePort(t)
	opts := fmt.Sprintf("-p %d -h 127.0.0.1 -k %s -F", port, dir)
	if out, err := runErr(cred, nil, pgctl, "-D", data, "-w", "-t", "60", "-o", opts, "-l", filepath.Join(dir, "server.log"), "start"); err != nil {
		log, _ := os.ReadFile(filepath.Join(dir, "server.log"))
		unavailable(t, install, "the PostgreSQL server did not start: %v\n%s\n%s", err, out, log)
	}
	t.Cleanup(func() { runErr(cred, nil, pgctl, "-D", data, "-m", "immediate", "stop") })
	t.Logf("PostgreSQL on port %d: initdb and start-up took %.1f s", port, time.Since(started).Seconds())
	return &pgServer{psql: psql, port: port}
}

// psqlArgs connects to the server as its superuser.
func (s *pgServer) args(extra ...string) []string {
	return append([]string{"-X", "-q", "-v", "ON_ERROR_STOP=1", "-h", "127.0.0.1", "-p", strconv.Itoa(s.port), "-U", "leadline", "-d", "postgres"}, extra...)
}

// chServer is one ClickHouse server process.
type chServer struct {
	client []string // the client command, port included
	port   int
}

// startClickHouseCluster starts two ClickHouse servers on loopback ports,
// each a shard of the cluster "leadline_test"; they are stopped and their
// folders removed when the test ends.
func startClickHouseCluster(t *testing.T) [2]*chServer {
	t.Helper()
	const install = "apt-get install -y clickhouse-server"
	var server, client []string
	if s, c := findBin("clickhouse-server"), findBin("clickhouse-client"); s != "" && c != "" {
		server, client = []string{s}, []string{c}
	} else if b := findBin("clickhouse"); b != "" {
		server, client = []string{b, "server"}, []string{b, "client"}
	} else {
		unavailable(t, install, "ClickHouse is not installed (clickhouse-server and clickhouse-client not found on PATH)")
	}
	ports := [2][2]int{{freePort(t), freePort(t)}, {freePort(t), freePort(t)}}
	started := time.Now()
	var out [2]*chServer
	for i := range out {
		dir, err := os.MkdirTemp("", "leadline-ch-")
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { os.RemoveAll(dir) })
		cfg := fmt.Sprintf(`<?xml version="1.0"?>
<yandex>
  <logger><level>warning</level><log>%[1]s/server.log</log><errorlog>%[1]s/error.log</errorlog><console>0</console></logger>
  <tcp_port>%[2]d</tcp_port>
  <http_port>%[3]d</http_port>
  <listen_host>127.0.0.1</listen_host>
  <path>%[1]s/data/</path>
  <tmp_path>%[1]s/tmp/</tmp_path>
  <user_files_path>%[1]s/files/</user_files_path>
  <format_schema_path>%[1]s/schemas/</format_schema_path>
  <users_config>%[1]s/users.xml</users_config>
  <default_profile>default</default_profile>
  <default_database>default</default_database>
  <mark_cache_size>5368709120</mark_cache_size>
  <remote_servers>
    <leadline_test>
      <shard><replica><host>127.0.0.1</host><port>%[4]d</port></replica></shard>
      <shard><replica><host>127.0.0.1</host><port>%[5]d</port></replica></shard>
    </leadline_test>
  </remote_servers>
</yandex>
`, dir, ports[i][0], ports[i][1], ports[0][0], ports[1][0])
		users := `<?xml version="1.0"?>
<yandex>
  <profiles><default></default></profiles>
  <users><default><password></password><networks><ip>127.0.0.1</ip><ip>::1</ip></networks><profile>default</profile><quota>default</quota></default></users>
  <quotas><default></default></quotas>
</yandex>
`
		if err := os.WriteFile(filepath.Join(dir, "config.xml"), []byte(cfg), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "users.xml"), []byte(users), 0o644); err != nil {
			t.Fatal(err)
		}
		args := append(append([]string{}, server[1:]...), "--config-file="+filepath.Join(dir, "config.xml"))
		cmd := exec.Command(server[0], args...)
		var log bytes.Buffer
		cmd.Stdout, cmd.Stderr = &log, &log
		if err := cmd.Start(); err != nil {
			unavailable(t, install, "clickhouse-server did not start: %v", err)
		}
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		t.Cleanup(func() {
			cmd.Process.Signal(syscall.SIGTERM)
			select {
			case <-done:
			case <-time.After(15 * time.Second):
				cmd.Process.Kill()
				<-done
			}
		})
		s := &chServer{client: append(append([]string{}, client...), "--host", "127.0.0.1", "--port", strconv.Itoa(ports[i][0])), port: ports[i][0]}
		deadline := time.Now().Add(60 * time.Second)
		for {
			o, err := runErr(nil, nil, s.client[0], append(s.client[1:], "--query", "SELECT 1")...)
			if err == nil {
				break
			}
			select {
			case err := <-done:
				errLog, _ := os.ReadFile(filepath.Join(dir, "error.log"))
				unavailable(t, install, "clickhouse-server on port %d stopped: %v\n%s\n%s", ports[i][0], err, log.String(), errLog)
			default:
			}
			if time.Now().After(deadline) {
				unavailable(t, install, "clickhouse-server on port %d did not answer within 60 s: %s", ports[i][0], o)
			}
			time.Sleep(200 * time.Millisecond)
		}
		out[i] = s
	}
	t.Logf("ClickHouse shards on ports %d and %d: start-up took %.1f s", ports[0][0], ports[1][0], time.Since(started).Seconds())
	return out
}

// query runs SQL on the server; extra client flags come first.
func (s *chServer) query(t *testing.T, stdin []byte, q string, extra ...string) []byte {
	t.Helper()
	args := append(append(append([]string{}, s.client[1:]...), extra...), "--query", q)
	return run(t, nil, stdin, s.client[0], args...)
}
