<#
.SYNOPSIS
Install Tamis for the current user from this kit, with no network access at all.

.DESCRIPTION
1. Checks every file of the kit against SHA256SUMS.
2. Creates a private Python environment in <Prefix>\venv with the Python given (or found).
3. Installs the kit's wheels with pip --no-index, hash-checked; no server is contacted.
4. Adds a Start menu shortcut (and a desktop one with -DesktopShortcut) and an entry under
   Settings > Apps for this user (HKCU), so Tamis can be removed like any other program.
5. Writes <Prefix>\install-manifest.txt and <Prefix>\uninstall.ps1.
No administrator rights are needed. Run through install.cmd where script execution is restricted.

.EXAMPLE
powershell -NoProfile -ExecutionPolicy Bypass -File install.ps1 -Prefix "$env:LOCALAPPDATA\Programs\Tamis"
#>
param(
    [string]$Prefix = (Join-Path $env:LOCALAPPDATA 'Programs\Tamis'),
    [string]$Python = '',
    [switch]$NoShortcuts,
    [switch]$DesktopShortcut
)
$ErrorActionPreference = 'Stop'
$Kit = $PSScriptRoot

function Say([string]$words) { Write-Host "tamis install: $words" }
function Fail([string]$words) { Write-Host "tamis install: error: $words" -ForegroundColor Red; exit 1 }

$info = @{}
foreach ($line in Get-Content -LiteralPath (Join-Path $Kit 'KIT_INFO')) {
    $k, $v = $line -split '=', 2
    if ($k) { $info[$k] = $v }
}
$WantPy = $info['python_version']
$Version = $info['tamis_version']
if ($info['platform'] -ne 'windows-x64') { Fail "this kit is for $($info['platform']), not Windows" }

# 1. checksums
Say 'checking the kit against SHA256SUMS'
foreach ($line in Get-Content -LiteralPath (Join-Path $Kit 'SHA256SUMS')) {
    if (-not $line.Trim()) { continue }
    $expected, $name = $line -split '  ', 2
    $file = Join-Path $Kit ($name -replace '/', '\')
    if (-not (Test-Path -LiteralPath $file)) { Fail "missing file of the kit: $name; copy the kit again" }
    $actual = (Get-FileHash -Algorithm SHA256 -LiteralPath $file).Hash.ToLowerInvariant()
    if ($actual -ne $expected) { Fail "$name does not match SHA256SUMS; copy the kit again" }
}

# 2. a Python of the version the kit was built for: -Python, then the py launcher, then python
$candidates = @()
if ($Python) { $candidates += , @($Python) }
if (Get-Command py -ErrorAction SilentlyContinue) { $candidates += , @('py', "-$WantPy") }
if (Get-Command python -ErrorAction SilentlyContinue) { $candidates += , @('python') }
$PyCmd = $null
foreach ($c in $candidates) {
    $exe = $c[0]; $pre = @($c | Select-Object -Skip 1)
    try { $have = & $exe @pre -c 'import sys; print("%d.%d" % sys.version_info[:2])' 2>$null } catch { continue }
    if ($LASTEXITCODE -eq 0 -and "$have".Trim() -eq $WantPy) { $PyCmd = $c; break }
}
if (-not $PyCmd) { Fail "Python $WantPy was not found; install it for this user or pass -Python C:\path\to\python.exe" }
$exe = $PyCmd[0]; $pre = @($PyCmd | Select-Object -Skip 1)

$Prefix = [System.IO.Path]::GetFullPath($Prefix)
$Manifest = Join-Path $Prefix 'install-manifest.txt'
if ((Test-Path -LiteralPath $Prefix) -and -not (Test-Path -LiteralPath $Manifest) -and
    (Get-ChildItem -LiteralPath $Prefix -Force | Select-Object -First 1)) {
    Fail "'$Prefix' exists and was not made by this installer; choose another -Prefix"
}
if (Test-Path -LiteralPath (Join-Path $Prefix 'uninstall.ps1')) {
    Say "removing the earlier installation in $Prefix first"
    & (Join-Path $Prefix 'uninstall.ps1') -Quiet
}

Say "creating the environment in $Prefix\venv (Python $WantPy)"
New-Item -ItemType Directory -Force -Path $Prefix | Out-Null
& $exe @pre -m venv (Join-Path $Prefix 'venv')
if ($LASTEXITCODE -ne 0) { Fail 'could not create a virtual environment' }
$VenvPy = Join-Path $Prefix 'venv\Scripts\python.exe'

# 3. offline, hash-checked install; PIP_CONFIG_FILE=nul and --isolated keep any pip configuration
#    of the machine (an index, a proxy) out of it
$count = (Get-ChildItem -LiteralPath (Join-Path $Kit 'wheels') -Filter *.whl).Count
Say "installing $count wheels without network"
$env:PIP_CONFIG_FILE = 'nul'
& $VenvPy -m pip --isolated install --no-index --find-links (Join-Path $Kit 'wheels') --require-hashes `
    --no-cache-dir --disable-pip-version-check --quiet -r (Join-Path $Kit 'requirements.txt')
$pipStatus = $LASTEXITCODE
Remove-Item Env:\PIP_CONFIG_FILE
if ($pipStatus -ne 0) { Fail "pip could not install the kit's wheels (see above); nothing outside $Prefix was changed" }

# 4. shortcuts and the per-user Apps entry
$lines = @("# Tamis $Version installed $((Get-Date).ToUniversalTime().ToString('s'))Z from $Kit", "prefix=$Prefix")
$Gui = Join-Path $Prefix 'venv\Scripts\tamis-desktop.exe'
Copy-Item -LiteralPath (Join-Path $Kit 'uninstall.ps1') -Destination (Join-Path $Prefix 'uninstall.ps1') -Force
if (-not $NoShortcuts) {
    $shell = New-Object -ComObject WScript.Shell
    $places = @([Environment]::GetFolderPath('Programs'))
    if ($DesktopShortcut) { $places += [Environment]::GetFolderPath('Desktop') }
    foreach ($dir in $places) {
        $path = Join-Path $dir 'Tamis.lnk'
        $lnk = $shell.CreateShortcut($path)
        $lnk.TargetPath = $Gui
        $lnk.WorkingDirectory = [Environment]::GetFolderPath('MyDocuments')
        $lnk.Description = 'Choose the columns that matter in a workbook'
        $lnk.Save()
        $lines += "created=$path"
    }
    $key = 'HKCU:\Software\Microsoft\Windows\CurrentVersion\Uninstall\Tamis'
    New-Item -Path $key -Force | Out-Null
    $un = "powershell.exe -NoProfile -ExecutionPolicy Bypass -File `"$(Join-Path $Prefix 'uninstall.ps1')`""
    Set-ItemProperty -Path $key -Name DisplayName -Value 'Tamis'
    Set-ItemProperty -Path $key -Name DisplayVersion -Value $Version
    Set-ItemProperty -Path $key -Name Publisher -Value 'Tamis'
    Set-ItemProperty -Path $key -Name InstallLocation -Value $Prefix
    Set-ItemProperty -Path $key -Name UninstallString -Value $un
    Set-ItemProperty -Path $key -Name NoModify -Value 1 -Type DWord
    Set-ItemProperty -Path $key -Name NoRepair -Value 1 -Type DWord
    $lines += "registry=$key"
}
Set-Content -LiteralPath $Manifest -Value $lines -Encoding UTF8

& (Join-Path $Prefix 'venv\Scripts\tamis.exe') --version | Out-Null
if ($LASTEXITCODE -ne 0) { Fail 'the installed command does not start' }
Say "done: Tamis $Version is in $Prefix"
Say "command line: $(Join-Path $Prefix 'venv\Scripts\tamis.exe')"
Say "to remove it: Settings > Apps > Tamis, or $(Join-Path $Prefix 'uninstall.ps1')"
