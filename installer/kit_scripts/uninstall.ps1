<#
.SYNOPSIS
Remove Tamis installed by install.ps1: the environment, the shortcuts and the Apps entry listed in
install-manifest.txt, and the installation folder. Workbooks are never touched. The settings file
in %APPDATA%\tamis stays unless -Settings is given.
#>
param([switch]$Settings, [switch]$Quiet)
$ErrorActionPreference = 'Stop'
$Prefix = $PSScriptRoot
function Say([string]$words) { if (-not $Quiet) { Write-Host "tamis uninstall: $words" } }

$Manifest = Join-Path $Prefix 'install-manifest.txt'
if (-not (Test-Path -LiteralPath $Manifest) -or -not (Test-Path -LiteralPath (Join-Path $Prefix 'venv'))) {
    Write-Host "tamis uninstall: error: '$Prefix' does not look like a Tamis installation; nothing removed"
    exit 1
}
foreach ($line in Get-Content -LiteralPath $Manifest) {
    $k, $v = $line -split '=', 2
    if ($k -eq 'created' -and (Test-Path -LiteralPath $v)) { Remove-Item -LiteralPath $v -Recurse -Force; Say "removed $v" }
    if ($k -eq 'registry' -and (Test-Path -LiteralPath $v)) { Remove-Item -LiteralPath $v -Recurse -Force; Say "removed $v" }
}
if ($Settings) {
    $conf = if ($env:TAMIS_CONFIG_DIR) { $env:TAMIS_CONFIG_DIR } else { Join-Path $env:APPDATA 'tamis' }
    if (Test-Path -LiteralPath $conf) { Remove-Item -LiteralPath $conf -Recurse -Force; Say "removed settings $conf" }
}
Set-Location -LiteralPath $env:TEMP
# this script lives inside the folder: remove the folder from a helper process once this one exits
$cmd = "Start-Sleep -Seconds 2; Remove-Item -LiteralPath '$($Prefix -replace "'", "''")' -Recurse -Force"
Start-Process -FilePath powershell.exe -ArgumentList '-NoProfile', '-Command', $cmd -WindowStyle Hidden
Say "removing $Prefix"
